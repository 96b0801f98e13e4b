package meshfile

import (
	"fmt"
	"strings"
)

// gmshTypes maps gmsh element type numbers to ours.
var gmshTypes = map[int]string{15: Vertex, 1: Line2, 8: Line3, 2: Tri3, 9: Tri6, 3: Quad4}

// gmshNames maps a type number gmsh knows but we do not read to its name,
// for messages.
var gmshNames = map[int]string{4: "4-node tetrahedron", 5: "8-node hexahedron", 6: "6-node prism", 7: "5-node pyramid", 10: "9-node quadrilateral", 11: "10-node tetrahedron", 16: "8-node quadrilateral", 21: "10-node triangle"}

func gmshType(t *tokens, n int) (string, error) {
	if ty, ok := gmshTypes[n]; ok {
		return ty, nil
	}
	if name, ok := gmshNames[n]; ok {
		return "", t.errorf("element type %d (%s) is not supported; this tool reads points, 2- and 3-node lines, 3- and 6-node triangles and 4-node quadrilaterals", n, name)
	}
	return "", t.errorf("unknown element type %d", n)
}

// gmshReader collects a gmsh file: nodes by tag, elements by type and
// physical group, point data by name.
type gmshReader struct {
	t      *tokens
	f      *File
	index  map[int]int // node tag -> index in f.Points
	names  map[[2]int]string
	blocks map[[2]string]*Block
	order  [][2]string
	// entity physical groups (4.1): dim, entity tag -> first physical tag
	entities map[[2]int]int
}

func readGmsh(data []byte) (*File, error) {
	r := &gmshReader{t: newTokens(data), f: &File{Format: "gmsh", Data: map[string][]float64{}},
		index: map[int]int{}, names: map[[2]int]string{}, blocks: map[[2]string]*Block{}, entities: map[[2]int]int{}}
	t := r.t
	if err := t.expect("$MeshFormat"); err != nil {
		return nil, err
	}
	version := t.word()
	fileType, err := t.int("file type", 0, 1)
	if err != nil {
		return nil, err
	}
	if _, err := t.int("data size", 4, 16); err != nil {
		return nil, err
	}
	if fileType == 1 {
		return nil, t.errorf("binary gmsh files are not read yet; save the mesh as ASCII (gmsh: -format msh41 without -bin, or msh22)")
	}
	var v4 bool
	switch {
	case strings.HasPrefix(version, "2."):
	case strings.HasPrefix(version, "4."):
		v4 = true
		r.f.Format = "gmsh 4"
	default:
		return nil, t.errorf("gmsh format version %q; this tool reads 2.2 and 4.1", clip(version))
	}
	if !v4 {
		r.f.Format = "gmsh 2"
	}
	if err := t.expect("$EndMeshFormat"); err != nil {
		return nil, err
	}
	seenNodes := false
	for {
		sec := t.word()
		if sec == "" {
			break
		}
		if !strings.HasPrefix(sec, "$") {
			return nil, t.errorf("expected a section ($Nodes, $Elements, …), found %q", clip(sec))
		}
		var err error
		switch sec {
		case "$PhysicalNames":
			err = r.physicalNames()
		case "$Entities":
			if v4 {
				err = r.entities4()
			} else {
				err = r.skip(sec)
			}
		case "$Nodes":
			if v4 {
				err = r.nodes4()
			} else {
				err = r.nodes2()
			}
			seenNodes = true
		case "$Elements":
			if !seenNodes {
				return nil, t.errorf("$Elements before $Nodes")
			}
			if v4 {
				err = r.elements4()
			} else {
				err = r.elements2()
			}
		case "$NodeData":
			if !seenNodes {
				return nil, t.errorf("$NodeData before $Nodes")
			}
			err = r.nodeData()
		default:
			err = r.skip(sec)
		}
		if err != nil {
			return nil, err
		}
	}
	for _, k := range r.order {
		r.f.Blocks = append(r.f.Blocks, *r.blocks[k])
	}
	return r.f, nil
}

// skip passes over a section we do not need.
func (r *gmshReader) skip(sec string) error {
	end := "$End" + sec[1:]
	for {
		w := r.t.word()
		if w == end {
			return nil
		}
		if w == "" {
			return r.t.errorf("the file ends inside %s", sec)
		}
	}
}

func (r *gmshReader) physicalNames() error {
	t := r.t
	n, err := t.count("number of physical names", 6)
	if err != nil {
		return err
	}
	for range n {
		dim, err := t.int("dimension of a physical name", 0, 3)
		if err != nil {
			return err
		}
		tag, err := t.int("physical tag", -1<<31, 1<<31-1)
		if err != nil {
			return err
		}
		name := strings.Trim(t.restOfLine(), `"`)
		r.names[[2]int{dim, tag}] = name
	}
	return t.expect("$EndPhysicalNames")
}

func (r *gmshReader) group(dim, physical int) string {
	if physical == 0 {
		return ""
	}
	if n, ok := r.names[[2]int{dim, physical}]; ok {
		return n
	}
	return fmt.Sprintf("%d", physical)
}

func (r *gmshReader) addNode(tag int, x, y, z float64) error {
	if _, dup := r.index[tag]; dup {
		return r.t.errorf("node %d is given twice", tag)
	}
	r.index[tag] = len(r.f.Points)
	r.f.Points = append(r.f.Points, [3]float64{x, y, z})
	return nil
}

func (r *gmshReader) xyz() (x, y, z float64, err error) {
	if x, err = r.t.float("x"); err != nil {
		return
	}
	if y, err = r.t.float("y"); err != nil {
		return
	}
	z, err = r.t.float("z")
	return
}

func (r *gmshReader) nodes2() error {
	t := r.t
	n, err := t.count("number of nodes", 8)
	if err != nil {
		return err
	}
	for range n {
		tag, err := t.int("node tag", 1, 1<<31-1)
		if err != nil {
			return err
		}
		x, y, z, err := r.xyz()
		if err != nil {
			return err
		}
		if err := r.addNode(tag, x, y, z); err != nil {
			return err
		}
	}
	return t.expect("$EndNodes")
}

func (r *gmshReader) node(tag int) (int, error) {
	i, ok := r.index[tag]
	if !ok {
		return 0, r.t.errorf("node %d is not among the nodes", tag)
	}
	return i, nil
}

func (r *gmshReader) add(ty, group string, nodes []int) {
	k := [2]string{ty, group}
	b, ok := r.blocks[k]
	if !ok {
		b = &Block{Type: ty, Group: group}
		r.blocks[k] = b
		r.order = append(r.order, k)
	}
	b.Nodes = append(b.Nodes, nodes...)
}

func (r *gmshReader) elements2() error {
	t := r.t
	n, err := t.count("number of elements", 8)
	if err != nil {
		return err
	}
	nodes := make([]int, 0, 6)
	for range n {
		if _, err := t.int("element tag", 1, 1<<31-1); err != nil {
			return err
		}
		code, err := t.int("element type", 1, 1000)
		if err != nil {
			return err
		}
		ty, err := gmshType(t, code)
		if err != nil {
			return err
		}
		ntags, err := t.int("number of tags", 0, 64)
		if err != nil {
			return err
		}
		physical := 0
		for j := range ntags {
			v, err := t.int("tag", -1<<31, 1<<31-1)
			if err != nil {
				return err
			}
			if j == 0 {
				physical = v
			}
		}
		nodes = nodes[:0]
		for range NodesOf[ty] {
			tag, err := t.int("node of an element", 1, 1<<31-1)
			if err != nil {
				return err
			}
			i, err := r.node(tag)
			if err != nil {
				return err
			}
			nodes = append(nodes, i)
		}
		r.add(ty, r.group(DimOf[ty], physical), nodes)
	}
	return t.expect("$EndElements")
}

func (r *gmshReader) entities4() error {
	t := r.t
	var counts [4]int
	for d := range 4 {
		n, err := t.count("number of entities", 4)
		if err != nil {
			return err
		}
		counts[d] = n
	}
	for d := range 4 {
		for range counts[d] {
			tag, err := t.int("entity tag", -1<<31, 1<<31-1)
			if err != nil {
				return err
			}
			nbox := 6
			if d == 0 {
				nbox = 3
			}
			for range nbox {
				if _, err := t.float("bounding box"); err != nil {
					return err
				}
			}
			np, err := t.int("number of physical tags", 0, 1<<20)
			if err != nil {
				return err
			}
			for j := range np {
				v, err := t.int("physical tag", -1<<31, 1<<31-1)
				if err != nil {
					return err
				}
				if j == 0 {
					r.entities[[2]int{d, tag}] = v
				}
			}
			if d > 0 {
				nb, err := t.count("number of bounding entities", 2)
				if err != nil {
					return err
				}
				for range nb {
					if _, err := t.int("bounding entity", -1<<31, 1<<31-1); err != nil {
						return err
					}
				}
			}
		}
	}
	return t.expect("$EndEntities")
}

func (r *gmshReader) nodes4() error {
	t := r.t
	blocks, err := t.count("number of node blocks", 8)
	if err != nil {
		return err
	}
	if _, err := t.count("number of nodes", 8); err != nil {
		return err
	}
	for range 2 {
		if _, err := t.int("node tag range", 0, 1<<62); err != nil {
			return err
		}
	}
	for range blocks {
		if _, err := t.int("entity dimension", 0, 3); err != nil {
			return err
		}
		if _, err := t.int("entity tag", -1<<31, 1<<31-1); err != nil {
			return err
		}
		param, err := t.int("parametric flag", 0, 1)
		if err != nil {
			return err
		}
		if param == 1 {
			return t.errorf("parametric node coordinates are not read; save the mesh without them")
		}
		n, err := t.count("number of nodes in a block", 8)
		if err != nil {
			return err
		}
		tags := make([]int, n)
		for j := range tags {
			if tags[j], err = t.int("node tag", 1, 1<<62); err != nil {
				return err
			}
		}
		for _, tag := range tags {
			x, y, z, err := r.xyz()
			if err != nil {
				return err
			}
			if err := r.addNode(tag, x, y, z); err != nil {
				return err
			}
		}
	}
	return t.expect("$EndNodes")
}

func (r *gmshReader) elements4() error {
	t := r.t
	blocks, err := t.count("number of element blocks", 8)
	if err != nil {
		return err
	}
	if _, err := t.count("number of elements", 4); err != nil {
		return err
	}
	for range 2 {
		if _, err := t.int("element tag range", 0, 1<<62); err != nil {
			return err
		}
	}
	nodes := make([]int, 0, 6)
	for range blocks {
		dim, err := t.int("entity dimension", 0, 3)
		if err != nil {
			return err
		}
		ent, err := t.int("entity tag", -1<<31, 1<<31-1)
		if err != nil {
			return err
		}
		code, err := t.int("element type", 1, 1000)
		if err != nil {
			return err
		}
		ty, err := gmshType(t, code)
		if err != nil {
			return err
		}
		n, err := t.count("number of elements in a block", 4)
		if err != nil {
			return err
		}
		group := r.group(dim, r.entities[[2]int{dim, ent}])
		for range n {
			if _, err := t.int("element tag", 1, 1<<62); err != nil {
				return err
			}
			nodes = nodes[:0]
			for range NodesOf[ty] {
				tag, err := t.int("node of an element", 1, 1<<62)
				if err != nil {
					return err
				}
				i, err := r.node(tag)
				if err != nil {
					return err
				}
				nodes = append(nodes, i)
			}
			r.add(ty, group, nodes)
		}
	}
	return t.expect("$EndElements")
}

// nodeData reads a $NodeData section with one component per node.
func (r *gmshReader) nodeData() error {
	t := r.t
	ns, err := t.int("number of string tags", 0, 64)
	if err != nil {
		return err
	}
	name := ""
	for j := range ns {
		t.skipSpace()
		s := strings.Trim(t.restOfLine(), `"`)
		if j == 0 {
			name = s
		}
	}
	nr, err := t.int("number of real tags", 0, 64)
	if err != nil {
		return err
	}
	for range nr {
		if _, err := t.float("real tag"); err != nil {
			return err
		}
	}
	ni, err := t.int("number of integer tags", 0, 64)
	if err != nil {
		return err
	}
	comps, count := 1, -1
	for j := range ni {
		v, err := t.int("integer tag", -1<<31, 1<<62)
		if err != nil {
			return err
		}
		switch j {
		case 1:
			comps = v
		case 2:
			count = v
		}
	}
	if count < 0 || count > len(t.b) {
		return t.errorf("node data %q does not say how many values it has", name)
	}
	vals := make([]float64, len(r.f.Points))
	seen := make([]bool, len(r.f.Points))
	for range count {
		tag, err := t.int("node tag", 1, 1<<62)
		if err != nil {
			return err
		}
		i, err := r.node(tag)
		if err != nil {
			return err
		}
		for c := range comps {
			v, err := t.float("node value")
			if err != nil {
				return err
			}
			if c == 0 {
				vals[i] = v
			}
		}
		seen[i] = true
	}
	if comps == 1 {
		for i, ok := range seen {
			if !ok {
				return t.errorf("node data %q has no value at node %d", name, i)
			}
		}
		if name == "" {
			name = fmt.Sprintf("data%d", len(r.f.Data)+1)
		}
		r.f.Data[name] = vals
	}
	return t.expect("$EndNodeData")
}

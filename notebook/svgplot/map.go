package svgplot

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Map is a colour map of a field on a triangle mesh with nodes (X[i],
// Y[i]) and triangles Tri. Values holds one value per node (a P1 field;
// each triangle takes the mean over it, after one red refinement when the
// mesh is small, for a smoother look) or, with PerCell, one value per
// triangle (an indicator). Log selects a logarithmic colour scale; values
// it cannot place (NaN, or ≤ 0 with Log) are drawn grey.
type Map struct {
	Title, Label string
	X, Y         []float64
	Tri          [][3]int32
	Values       []float64
	PerCell      bool
	Log          bool
}

// Layout of a map, in px.
const (
	mapWidth   = 600
	mapHeight  = 460
	mapLevels  = 64   // colours in the map: enough for the eye, few paths
	refineMax  = 4096 // P1 meshes up to this size are refined once for drawing
	missingRGB = "#bdbdbd"
)

// SVG renders the map as a standalone SVG document. Triangles of one
// colour level are merged into one path with coordinates in tenths of a
// pixel, which keeps a 20 000-triangle map near 0.5 MB.
func (m Map) SVG() string {
	var b strings.Builder
	svgOpen(&b, mapWidth, mapHeight, m.Title)
	top := 14.0
	if m.Title != "" {
		top = 38
		text(&b, mapWidth/2, 22, `text-anchor="middle" font-size="15" font-weight="bold"`, m.Title)
	}
	left, right, bottom := 14.0, float64(mapWidth)-120, float64(mapHeight)-14

	if msg := m.check(); msg != "" {
		text(&b, (left+right)/2, (top+bottom)/2, `text-anchor="middle" fill="#555555"`, msg)
		b.WriteString("</svg>")
		return b.String()
	}

	// Cells to draw: corners and value.
	type cell struct {
		p [3][2]float64
		v float64
	}
	var cells []cell
	refine := !m.PerCell && len(m.Tri) <= refineMax
	for k, t := range m.Tri {
		if !m.validTri(t) {
			continue
		}
		var p [3][2]float64
		for j := 0; j < 3; j++ {
			p[j] = [2]float64{m.X[t[j]], m.Y[t[j]]}
		}
		if m.PerCell {
			cells = append(cells, cell{p, m.Values[k]})
			continue
		}
		v := [3]float64{m.Values[t[0]], m.Values[t[1]], m.Values[t[2]]}
		if !refine {
			cells = append(cells, cell{p, (v[0] + v[1] + v[2]) / 3})
			continue
		}
		// Red refinement: the mean of a linear function over each child is
		// the mean of its three corner values.
		mid := func(i, j int) ([2]float64, float64) {
			return [2]float64{(p[i][0] + p[j][0]) / 2, (p[i][1] + p[j][1]) / 2}, (v[i] + v[j]) / 2
		}
		m01, v01 := mid(0, 1)
		m12, v12 := mid(1, 2)
		m20, v20 := mid(2, 0)
		cells = append(cells,
			cell{[3][2]float64{p[0], m01, m20}, (v[0] + v01 + v20) / 3},
			cell{[3][2]float64{m01, p[1], m12}, (v01 + v[1] + v12) / 3},
			cell{[3][2]float64{m20, m12, p[2]}, (v20 + v12 + v[2]) / 3},
			cell{[3][2]float64{m01, m12, m20}, (v01 + v12 + v20) / 3})
	}

	// Geometry: fit the bounding box, keeping the aspect ratio.
	xmin, xmax, ymin, ymax := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for _, c := range cells {
		for _, q := range c.p {
			xmin, xmax = math.Min(xmin, q[0]), math.Max(xmax, q[0])
			ymin, ymax = math.Min(ymin, q[1]), math.Max(ymax, q[1])
		}
	}
	pad := 6.0
	scale := math.Min((right-left-2*pad)/(xmax-xmin), (bottom-top-2*pad)/(ymax-ymin))
	if math.IsInf(scale, 0) || math.IsNaN(scale) || scale <= 0 {
		scale = 1
	}
	ox := left + pad + ((right-left-2*pad)-scale*(xmax-xmin))/2
	oy := top + pad + ((bottom-top-2*pad)+scale*(ymax-ymin))/2
	// tenths of a pixel, as integers, so relative moves add up exactly
	tx := func(x float64) int { return int(math.Round((ox + scale*(x-xmin)) * 10)) }
	ty := func(y float64) int { return int(math.Round((oy - scale*(y-ymin)) * 10)) }

	// Colour scale.
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, c := range cells {
		if m.placeable(c.v) {
			lo, hi = math.Min(lo, c.v), math.Max(hi, c.v)
		}
	}
	level := func(v float64) int {
		if !m.placeable(v) || !(hi > lo) {
			if m.placeable(v) {
				return 0
			}
			return -1
		}
		t := (v - lo) / (hi - lo)
		if m.Log {
			t = (math.Log10(v) - math.Log10(lo)) / (math.Log10(hi) - math.Log10(lo))
		}
		return int(math.Round(t * (mapLevels - 1)))
	}

	// One path per level; -1 (missing) last.
	paths := make([]strings.Builder, mapLevels+1)
	for _, c := range cells {
		k := level(c.v)
		if k < 0 {
			k = mapLevels
		}
		d := &paths[k]
		x0, y0 := tx(c.p[0][0]), ty(c.p[0][1])
		x1, y1 := tx(c.p[1][0]), ty(c.p[1][1])
		x2, y2 := tx(c.p[2][0]), ty(c.p[2][1])
		d.WriteString("M" + tenths(x0) + sep(y0) + tenths(y0))
		d.WriteString("l" + tenths(x1-x0) + sep(y1-y0) + tenths(y1-y0))
		d.WriteString(sep(x2-x1) + tenths(x2-x1) + sep(y2-y1) + tenths(y2-y1) + "z")
	}
	for k := range paths {
		if paths[k].Len() == 0 {
			continue
		}
		colour := missingRGB
		if k < mapLevels {
			colour = levelColour(k)
		}
		// The stroke of the fill colour hides hairline seams between cells.
		b.WriteString(`<path d="` + paths[k].String() + `" fill="` + colour + `" stroke="` + colour + `" stroke-width="0.8" stroke-linejoin="round"/>`)
	}
	if lo > hi {
		text(&b, (left+right)/2, top+16, `text-anchor="middle" fill="#555555"`, "no values to colour")
	} else {
		m.colourBar(&b, right+20, top+10, bottom-10, lo, hi)
	}
	b.WriteString("</svg>")
	return b.String()
}

// levelColour is the colour of level k of mapLevels: viridis at k/(levels−1),
// so the smallest value gets the first colour and the largest the last.
func levelColour(k int) string {
	return viridis(float64(k) / (mapLevels - 1))
}

func (m Map) placeable(v float64) bool {
	return !math.IsNaN(v) && !math.IsInf(v, 0) && (!m.Log || v > 0)
}

func (m Map) validTri(t [3]int32) bool {
	for _, i := range t {
		if i < 0 || int(i) >= len(m.X) {
			return false
		}
		if math.IsNaN(m.X[i]) || math.IsNaN(m.Y[i]) || math.IsInf(m.X[i], 0) || math.IsInf(m.Y[i], 0) {
			return false
		}
	}
	return true
}

// check returns a message for input that cannot be drawn at all.
func (m Map) check() string {
	switch {
	case len(m.Tri) == 0 || len(m.X) == 0:
		return "no data"
	case len(m.X) != len(m.Y):
		return fmt.Sprintf("cannot draw: %d x coordinates but %d y coordinates", len(m.X), len(m.Y))
	case m.PerCell && len(m.Values) != len(m.Tri):
		return fmt.Sprintf("cannot draw: %d values for %d triangles (per-cell field)", len(m.Values), len(m.Tri))
	case !m.PerCell && len(m.Values) != len(m.X):
		return fmt.Sprintf("cannot draw: %d values for %d nodes (nodal field)", len(m.Values), len(m.X))
	}
	for _, t := range m.Tri {
		if m.validTri(t) {
			return ""
		}
	}
	return "no data: no triangle has valid node numbers and coordinates"
}

// colourBar draws the scale from lo (bottom) to hi (top) at x, with ticks.
func (m Map) colourBar(b *strings.Builder, x, y0, y1, lo, hi float64) {
	const w = 16.0
	// Whole pixels per level, so that no anti-aliased seams stripe the bar.
	step := math.Floor((y1 - y0) / mapLevels)
	y0 = math.Round(y0)
	y1 = y0 + step*mapLevels
	h := y1 - y0
	for k := 0; k < mapLevels; k++ {
		yk := y1 - step*float64(k+1)
		b.WriteString(`<rect x="` + num(x) + `" y="` + num(yk) + `" width="` + num(w) + `" height="` + num(step) + `" fill="` + levelColour(k) + `" shape-rendering="crispEdges"/>`)
	}
	b.WriteString(`<rect x="` + num(x) + `" y="` + num(y0) + `" width="` + num(w) + `" height="` + num(h) + `" fill="none" stroke="#333333"/>`)
	pos := func(v float64) float64 {
		if !(hi > lo) {
			return (y0 + y1) / 2
		}
		if m.Log {
			return y1 - h*(math.Log10(v)-math.Log10(lo))/(math.Log10(hi)-math.Log10(lo))
		}
		return y1 - h*(v-lo)/(hi-lo)
	}
	var ticks []tick
	if m.Log && hi > lo {
		all, _, _ := logTicks(lo, hi)
		for _, t := range all {
			if t.v >= lo*(1-1e-12) && t.v <= hi*(1+1e-12) && !t.minor {
				ticks = append(ticks, t)
			}
		}
		if len(ticks) < 2 {
			// Less than a decade: label the ends instead.
			ticks = []tick{{v: lo, label: compactExp(strconv.FormatFloat(lo, 'e', 2, 64))}, {v: hi, label: compactExp(strconv.FormatFloat(hi, 'e', 2, 64))}}
		}
	} else {
		ticks = insideTicks(lo, hi, 6)
	}
	var marks strings.Builder
	for _, t := range ticks {
		y := pos(t.v)
		marks.WriteString("M" + num(x+w) + " " + num(y) + "h5")
		tickLabel(b, x+w+8, y+4, "", t)
	}
	b.WriteString(`<path d="` + marks.String() + `" stroke="#333333"/>`)
	if m.Label != "" {
		cx, cy := x+w+75, (y0+y1)/2
		text(b, cx, cy, `text-anchor="middle" transform="rotate(-90 `+num(cx)+" "+num(cy)+`)"`, m.Label)
	}
}

// tenths writes n/10 compactly: 12 → "1.2", -5 → "-.5", 30 → "3".
func tenths(n int) string {
	neg := n < 0
	if neg {
		n = -n
	}
	s := ""
	if n%10 == 0 {
		s = strconv.Itoa(n / 10)
	} else if n < 10 {
		s = "." + strconv.Itoa(n)
	} else {
		s = strconv.Itoa(n/10) + "." + strconv.Itoa(n%10)
	}
	if neg {
		return "-" + s
	}
	return s
}

// sep separates two numbers in path data; a minus sign separates by itself.
func sep(next int) string {
	if next < 0 {
		return ""
	}
	return " "
}

package svgplot

import (
	"encoding/xml"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the sample SVGs in testdata/")

// checkSVG parses s as XML and checks it is a standalone SVG document
// without scripts or references to anything outside it. It returns the
// character data, joined by "|", for assertions on text.
func checkSVG(t *testing.T, s string) string {
	t.Helper()
	d := xml.NewDecoder(strings.NewReader(s))
	d.Strict = true
	var texts []string
	first := true
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("not well-formed XML: %v\n%.400s", err, s)
		}
		switch tok := tok.(type) {
		case xml.StartElement:
			if first {
				first = false
				attrs := map[string]string{}
				for _, a := range tok.Attr {
					attrs[a.Name.Local] = a.Value
				}
				if tok.Name.Local != "svg" || tok.Name.Space != "http://www.w3.org/2000/svg" ||
					attrs["viewBox"] == "" || attrs["width"] == "" || attrs["height"] == "" {
					t.Fatalf("root must be <svg> with xmlns, viewBox, width, height: %v", tok)
				}
			}
			switch tok.Name.Local {
			case "script", "foreignObject", "image", "use", "a", "style":
				t.Errorf("element <%s> not allowed", tok.Name.Local)
			}
			for _, a := range tok.Attr {
				if a.Name.Local == "href" || strings.HasPrefix(a.Name.Local, "on") || strings.Contains(a.Value, "url(") {
					t.Errorf("attribute %s=%q not allowed", a.Name.Local, a.Value)
				}
			}
		case xml.CharData:
			if s := strings.TrimSpace(string(tok)); s != "" {
				texts = append(texts, s)
			}
		}
	}
	return strings.Join(texts, "|")
}

func TestLinearTicks(t *testing.T) {
	tests := []struct {
		lo, hi float64
		want   string
	}{
		{0, 1, "0 0.2 0.4 0.6 0.8 1.0"},
		{0, 10, "0 2 4 6 8 10"},
		{-3.7, 12.1, "−5 0 5 10 15"},
		{0.3, 0.31, "0.300 0.302 0.304 0.306 0.308 0.310"},
		{1e-7, 3e-7, "1e−7 1.5e−7 2e−7 2.5e−7 3e−7"},
		{2e5, 1e6, "2e5 4e5 6e5 8e5 1e6"},
		{5, 5, "4.4 4.6 4.8 5.0 5.2 5.4 5.6"},
	}
	for _, tt := range tests {
		ticks, a, b := linearTicks(tt.lo, tt.hi, 6)
		var labels []string
		for _, tk := range ticks {
			labels = append(labels, tk.label)
		}
		if got := strings.Join(labels, " "); got != tt.want {
			t.Errorf("linearTicks(%g, %g) = %q, want %q", tt.lo, tt.hi, got, tt.want)
		}
		if a > math.Min(tt.lo, tt.hi) || b < tt.hi {
			t.Errorf("linearTicks(%g, %g): range [%g, %g] does not cover the data", tt.lo, tt.hi, a, b)
		}
		// 1-2-5 steps: the step over its decade is 1, 2 or 5.
		step := ticks[1].v - ticks[0].v
		m := step / math.Pow(10, math.Floor(math.Log10(step)+1e-9))
		if math.Abs(m-1) > 1e-6 && math.Abs(m-2) > 1e-6 && math.Abs(m-5) > 1e-6 {
			t.Errorf("linearTicks(%g, %g): step %g is not 1, 2 or 5 times a power of ten", tt.lo, tt.hi, step)
		}
	}
}

func TestLogTicks(t *testing.T) {
	tests := []struct {
		lo, hi       float64
		major        string
		minor        int
		wantA, wantB float64
	}{
		{1e-6, 1e-2, "-6 -5 -4 -3 -2", 32, 1e-6, 1e-2},
		{3e-5, 2, "-5 -4 -3 -2 -1 0 1", 48, 1e-5, 10},
		{0.5, 0.5, "-1 0", 8, 0.1, 1},
		{1e-12, 1e6, "-12 -9 -6 -3 0 3 6", 12, 1e-12, 1e6},
	}
	for _, tt := range tests {
		ticks, a, b := logTicks(tt.lo, tt.hi)
		var major []string
		minor := 0
		for _, tk := range ticks {
			if tk.minor {
				minor++
			} else {
				major = append(major, tk.label)
			}
		}
		if got := strings.Join(major, " "); got != tt.major || minor != tt.minor {
			t.Errorf("logTicks(%g, %g): majors %q, %d minors; want %q, %d", tt.lo, tt.hi, got, minor, tt.major, tt.minor)
		}
		if math.Abs(a/tt.wantA-1) > 1e-12 || math.Abs(b/tt.wantB-1) > 1e-12 {
			t.Errorf("logTicks(%g, %g): range [%g, %g], want [%g, %g]", tt.lo, tt.hi, a, b, tt.wantA, tt.wantB)
		}
	}
}

func TestPalettes(t *testing.T) {
	// viridis endpoints and midpoint as published in matplotlib's
	// _cm_listed.py: entry 0 (0.267004, 0.004874, 0.329415), entry 128
	// (0.127568, 0.566949, 0.550556), entry 255 (0.993248, 0.906157, 0.143936).
	tests := []struct {
		t   float64
		rgb [3]float64
	}{
		{0, [3]float64{0.267004, 0.004874, 0.329415}},
		{128.0 / 255, [3]float64{0.127568, 0.566949, 0.550556}},
		{1, [3]float64{0.993248, 0.906157, 0.143936}},
	}
	for _, tt := range tests {
		want := "#"
		for _, c := range tt.rgb {
			want += hex2(int(math.Round(c * 255)))
		}
		if got := viridis(tt.t); got != want {
			t.Errorf("viridis(%g) = %s, want %s", tt.t, got, want)
		}
	}
	if viridis(-1) != viridis(0) || viridis(math.NaN()) != viridis(0) || viridis(2) != viridis(1) {
		t.Error("viridis must clamp to [0, 1]")
	}
	// Okabe & Ito (2008), published RGB triples.
	published := map[string][3]int{
		"#0072B2": {0, 114, 178}, "#D55E00": {213, 94, 0}, "#009E73": {0, 158, 115},
		"#CC79A7": {204, 121, 167}, "#E69F00": {230, 159, 0}, "#56B4E9": {86, 180, 233},
		"#000000": {0, 0, 0}, "#F0E442": {240, 228, 66},
	}
	if len(okabeIto) != len(published) {
		t.Fatalf("palette has %d colours, want %d", len(okabeIto), len(published))
	}
	for _, c := range okabeIto {
		rgb, ok := published[c]
		if !ok {
			t.Errorf("colour %s is not in the Okabe–Ito palette", c)
			continue
		}
		for i := 0; i < 3; i++ {
			v, _ := strconv.ParseUint(c[1+2*i:3+2*i], 16, 8)
			if int(v) != rgb[i] {
				t.Errorf("%s channel %d = %d, want %d", c, i, v, rgb[i])
			}
		}
	}
}

func TestLinesEscaping(t *testing.T) {
	hostile := `<script>alert("x")</script> & 'q' javascript:void(0)` + "\x00"
	l := Lines{Title: hostile, XLabel: hostile, YLabel: hostile,
		Series: []Series{{Name: hostile, X: []float64{1, 2}, Y: []float64{3, 4}}}}
	s := l.SVG()
	texts := checkSVG(t, s)
	if strings.Contains(s, "<script") {
		t.Error("unescaped <script in output")
	}
	if !strings.Contains(texts, `<script>alert("x")</script> & 'q' javascript:void(0)`+"\uFFFD") {
		t.Errorf("title text did not survive escaping: %q", texts)
	}
}

func TestLines(t *testing.T) {
	nan := math.NaN()
	tests := []struct {
		name  string
		l     Lines
		texts []string // text content that must appear
		paths int      // curves drawn (paths with stroke-width 1.8 and an L)
	}{
		{"linear", Lines{XLabel: "h", YLabel: "error", Series: []Series{
			{Name: "P1", X: []float64{0, 1, 2}, Y: []float64{0, 1, 4}},
			{Name: "CR", X: []float64{0, 1, 2}, Y: []float64{1, 2, 3}}}},
			[]string{"P1", "CR", "h", "error", "0", "4"}, 2},
		{"log-log", Lines{LogX: true, LogY: true, Slope: -0.5, Series: []Series{
			{Name: "η", X: []float64{10, 100, 1000, 1e4}, Y: []float64{1, 0.3, 0.1, 0.03}}}},
			[]string{"η", "10|1", "10|4", "10|−2", "slope −0.5"}, 1},
		{"NaN and non-positive skipped", Lines{LogY: true, Series: []Series{
			{Name: "s", X: []float64{1, 2, 3, 4, 5}, Y: []float64{1, nan, -1, 0, 100}}}},
			[]string{"s", "10|0", "10|2"}, 0},
		{"empty", Lines{Title: "nothing", Series: []Series{{Name: "a", X: nil, Y: nil}}},
			[]string{"nothing", "no data"}, 0},
		{"all NaN", Lines{Series: []Series{{Name: "a", X: []float64{nan}, Y: []float64{nan}}}},
			[]string{"no data"}, 0},
		{"ragged lengths", Lines{Series: []Series{{Name: "a", X: []float64{1, 2, 3}, Y: []float64{1, 2}}}},
			[]string{"a"}, 1},
	}
	for _, tt := range tests {
		s := tt.l.SVG()
		texts := checkSVG(t, s)
		for _, w := range tt.texts {
			if !strings.Contains(texts, w) {
				t.Errorf("%s: text %q missing from %q", tt.name, w, texts)
			}
		}
		if strings.Contains(s, "NaN") || strings.Contains(s, "Inf") {
			t.Errorf("%s: NaN or Inf in output", tt.name)
		}
		curves := 0
		for _, part := range strings.Split(s, "<path ")[1:] {
			if strings.Contains(part, `stroke-width="1.8" fill="none" stroke-linejoin`) && strings.Contains(part, "L") {
				curves++
			}
		}
		if curves != tt.paths {
			t.Errorf("%s: %d curves with a segment, want %d", tt.name, curves, tt.paths)
		}
	}
	// Distinct colours and shapes for the first seven series.
	var ss []Series
	for k := 0; k < 7; k++ {
		ss = append(ss, Series{Name: fmt.Sprint(k), X: []float64{0, 1}, Y: []float64{float64(k), float64(k + 1)}})
	}
	s := Lines{Series: ss}.SVG()
	for k := 0; k < 7; k++ {
		if !strings.Contains(s, `stroke="`+okabeIto[k]+`"`) {
			t.Errorf("series %d colour %s not used", k, okabeIto[k])
		}
	}
}

// square returns the unit square split into 2n² triangles with node
// values f(x, y).
func square(n int, f func(x, y float64) float64) Map {
	var m Map
	for j := 0; j <= n; j++ {
		for i := 0; i <= n; i++ {
			x, y := float64(i)/float64(n), float64(j)/float64(n)
			m.X = append(m.X, x)
			m.Y = append(m.Y, y)
			m.Values = append(m.Values, f(x, y))
		}
	}
	for j := 0; j < n; j++ {
		for i := 0; i < n; i++ {
			a := int32(j*(n+1) + i)
			m.Tri = append(m.Tri, [3]int32{a, a + 1, a + int32(n) + 2}, [3]int32{a, a + int32(n) + 2, a + int32(n) + 1})
		}
	}
	return m
}

func TestMapColours(t *testing.T) {
	// Three cells: the smallest value takes the first viridis colour, the
	// largest the last, the middle one the level nearest the middle.
	m := Map{Title: "indicator", Label: "η_T", PerCell: true,
		X: []float64{0, 1, 0, 1, 2}, Y: []float64{0, 0, 1, 1, 0},
		Tri: [][3]int32{{0, 1, 2}, {1, 3, 2}, {1, 4, 3}}, Values: []float64{1, 2, 3}}
	s := m.SVG()
	checkSVG(t, s)
	for _, c := range []string{"#440154", "#fde725", levelColour(32)} {
		if !strings.Contains(s, `<path d="M`) || !strings.Contains(s, `fill="`+c+`" stroke="`+c+`"`) {
			t.Errorf("cell colour %s missing", c)
		}
	}
	// Log scale: 1e-4 .. 1 puts 1e-2 in the middle, level 31.5 up to
	// rounding of the logarithms.
	m.Log = true
	m.Values = []float64{1e-4, 1e-2, 1}
	s = m.SVG()
	texts := checkSVG(t, s)
	mid := strings.Contains(s, `fill="`+levelColour(32)+`" stroke`) || strings.Contains(s, `fill="`+levelColour(31)+`" stroke`)
	if !mid || !strings.Contains(s, `fill="#440154" stroke`) || !strings.Contains(texts, "10|−4") {
		t.Errorf("log colour scale: middle colour or decade labels missing: %q", texts)
	}
	// NaN and non-positive values under Log are grey, not dropped.
	m.Values = []float64{math.NaN(), -1, 1}
	s = m.SVG()
	checkSVG(t, s)
	if strings.Count(s, `fill="`+missingRGB+`"`) != 1 || strings.Contains(s, "NaN") {
		t.Errorf("missing values must be one grey path: %s", s)
	}
}

func TestMapInput(t *testing.T) {
	good := square(2, func(x, y float64) float64 { return x + y })
	tests := []struct {
		name string
		m    Map
		want string
	}{
		{"empty", Map{}, "no data"},
		{"values", Map{X: good.X, Y: good.Y, Tri: good.Tri, Values: good.Values[:3]}, "cannot draw: 3 values for 9 nodes (nodal field)"},
		{"cells", Map{X: good.X, Y: good.Y, Tri: good.Tri, Values: good.Values, PerCell: true}, "cannot draw: 9 values for 8 triangles (per-cell field)"},
		{"coords", Map{X: good.X, Y: good.Y[:2], Tri: good.Tri, Values: good.Values}, "cannot draw: 9 x coordinates but 2 y coordinates"},
		{"indices", Map{X: good.X, Y: good.Y, Tri: [][3]int32{{0, 1, 99}, {-1, 0, 1}}, Values: good.Values}, "no data: no triangle"},
		{"constant", square(2, func(x, y float64) float64 { return 7 }), "7"},
	}
	for _, tt := range tests {
		texts := checkSVG(t, tt.m.SVG())
		if !strings.Contains(texts, tt.want) {
			t.Errorf("%s: want %q in %q", tt.name, tt.want, texts)
		}
	}
	// Aspect ratio: a 2×1 rectangle is drawn twice as wide as high.
	r := square(4, func(x, y float64) float64 { return x })
	for i := range r.X {
		r.X[i] *= 2
	}
	s := r.SVG()
	xs, ys := pathExtent(s)
	if math.Abs(xs/ys-2) > 0.02 {
		t.Errorf("aspect ratio %g, want 2", xs/ys)
	}
	// P1 colours: min and max nodal values reach the ends of the scale only
	// through cell means; the colour bar shows the range of those means.
	if !strings.Contains(s, `fill="#440154"`) || !strings.Contains(s, `fill="#fde725"`) {
		t.Error("P1 map must use both ends of the colour scale")
	}
}

// pathExtent returns the width and height covered by the absolute moves
// of the filled mesh paths (relative moves ignored: corners 0 suffice on
// a structured mesh whose first corners span the box).
func pathExtent(s string) (float64, float64) {
	xmin, xmax, ymin, ymax := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for _, part := range strings.Split(s, `<path d="`)[1:] {
		if !strings.Contains(part, `stroke-width="0.8"`) {
			continue
		}
		d := part[:strings.IndexByte(part, '"')]
		for _, seg := range strings.Split(d, "M")[1:] {
			cmd := seg[:strings.IndexByte(seg, 'l')]
			cmd = strings.Replace(cmd, "-", " -", 1)
			f := strings.Fields(cmd)
			x, _ := strconv.ParseFloat(f[0], 64)
			y, _ := strconv.ParseFloat(f[1], 64)
			xmin, xmax = math.Min(xmin, x), math.Max(xmax, x)
			ymin, ymax = math.Min(ymin, y), math.Max(ymax, y)
		}
	}
	return xmax - xmin, ymax - ymin
}

func TestTenths(t *testing.T) {
	tests := map[int]string{0: "0", 5: ".5", -5: "-.5", 12: "1.2", -123: "-12.3", 30: "3", -40: "-4"}
	for n, want := range tests {
		if got := tenths(n); got != want {
			t.Errorf("tenths(%d) = %q, want %q", n, got, want)
		}
		if v, err := strconv.ParseFloat(tenths(n), 64); err != nil || math.Abs(v-float64(n)/10) > 1e-12 {
			t.Errorf("tenths(%d) = %q does not read back", n, tenths(n))
		}
	}
}

// TestLargeMap states the size of a 20 000-triangle map and keeps it in check.
func TestLargeMap(t *testing.T) {
	m := square(100, func(x, y float64) float64 { return math.Sin(3*x) * math.Cos(2*y) })
	if len(m.Tri) != 20000 {
		t.Fatalf("%d triangles", len(m.Tri))
	}
	s := m.SVG()
	checkSVG(t, s)
	t.Logf("20 000-triangle P1 map: %d bytes", len(s))
	if len(s) > 700_000 {
		t.Errorf("20 000-triangle map is %d bytes, want under 700 kB", len(s))
	}
}

func TestSamples(t *testing.T) {
	samples := map[string]string{
		"lines-loglog.svg": Lines{Title: "Convergence on the L-shape", XLabel: "degrees of freedom",
			YLabel: "error bound", LogX: true, LogY: true, Slope: -1.0 / 3, Series: []Series{
				{Name: "uniform P1", X: []float64{65, 225, 833, 3201, 12545}, Y: []float64{0.31, 0.20, 0.127, 0.080, 0.0505}},
				{Name: "adaptive P1", X: []float64{65, 140, 310, 700, 1600, 3500, 8000}, Y: []float64{0.31, 0.19, 0.12, 0.078, 0.051, 0.034, 0.0226}},
				{Name: "η (estimator)", X: []float64{65, 140, 310, 700, 1600, 3500, 8000}, Y: []float64{0.45, 0.27, 0.17, 0.11, 0.072, 0.048, 0.032}},
			}}.SVG(),
		"lines-linear.svg": Lines{Title: "Energy along Newton steps", XLabel: "step", YLabel: "J(u_k)", Series: []Series{
			{Name: "p = 1.5", X: []float64{0, 1, 2, 3, 4, 5}, Y: []float64{0.8, 0.31, 0.12, 0.09, 0.088, 0.088}},
			{Name: "p = 3", X: []float64{0, 1, 2, 3, 4, 5}, Y: []float64{0.6, 0.45, 0.2, 0.18, math.NaN(), 0.17}},
		}}.SVG(),
		"map-p1.svg": func() string {
			m := square(12, func(x, y float64) float64 { return math.Sin(math.Pi*x) * math.Sin(math.Pi*y) * (1 + x) })
			m.Title, m.Label = "u_h on the unit square", "u_h"
			return m.SVG()
		}(),
		"map-indicator-log.svg": func() string {
			m := square(12, func(x, y float64) float64 { return 0 })
			m.Values = nil
			for _, tr := range m.Tri {
				cx := (m.X[tr[0]] + m.X[tr[1]] + m.X[tr[2]]) / 3
				cy := (m.Y[tr[0]] + m.Y[tr[1]] + m.Y[tr[2]]) / 3
				m.Values = append(m.Values, 1e-5/(1e-3+(cx-0.5)*(cx-0.5)+(cy-0.5)*(cy-0.5)))
			}
			m.PerCell, m.Log, m.Title, m.Label = true, true, "local indicators η_T²", "η_T²"
			return m.SVG()
		}(),
	}
	for name, s := range samples {
		checkSVG(t, s)
		path := filepath.Join("testdata", name)
		if *update {
			if err := os.WriteFile(path, []byte(s), 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
}

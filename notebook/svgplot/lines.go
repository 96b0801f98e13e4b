package svgplot

import (
	"math"
	"strconv"
	"strings"
)

// Series is one curve of a line plot: the points (X[i], Y[i]).
type Series struct {
	Name string
	X, Y []float64
}

// Lines is a line plot with markers, a legend and linear or logarithmic
// axes. Points with NaN or infinite coordinates, and non-positive ones on
// a logarithmic axis, are skipped and break the line there.
type Lines struct {
	Title, XLabel, YLabel string
	LogX, LogY            bool
	Series                []Series
	// Slope, when non-zero on a log-log plot, draws a reference triangle
	// of that slope (a convergence rate) labelled "slope <Slope>".
	Slope float64
}

// Size of a line plot, in px.
const (
	linesWidth  = 640
	linesHeight = 420
)

// axis maps data values to pixels along one direction.
type axis struct {
	log         bool
	lo, hi      float64 // data range (positive on log axes)
	p0, p1      float64 // pixel positions of lo and hi
	ticks       []tick
	dataLo, dHi float64
}

func (a *axis) px(v float64) float64 {
	if a.log {
		return a.p0 + (math.Log10(v)-math.Log10(a.lo))/(math.Log10(a.hi)-math.Log10(a.lo))*(a.p1-a.p0)
	}
	return a.p0 + (v-a.lo)/(a.hi-a.lo)*(a.p1-a.p0)
}

func (a *axis) ok(v float64) bool {
	return !math.IsNaN(v) && !math.IsInf(v, 0) && (!a.log || v > 0)
}

// SVG renders the plot as a standalone SVG document.
func (l Lines) SVG() string {
	var b strings.Builder
	svgOpen(&b, linesWidth, linesHeight, l.Title)
	ax := axis{log: l.LogX}
	ay := axis{log: l.LogY}

	// Data extent over the usable points.
	xlo, xhi := math.Inf(1), math.Inf(-1)
	ylo, yhi := math.Inf(1), math.Inf(-1)
	for _, s := range l.Series {
		n := min(len(s.X), len(s.Y))
		for i := 0; i < n; i++ {
			if ax.ok(s.X[i]) && ay.ok(s.Y[i]) {
				xlo, xhi = math.Min(xlo, s.X[i]), math.Max(xhi, s.X[i])
				ylo, yhi = math.Min(ylo, s.Y[i]), math.Max(yhi, s.Y[i])
			}
		}
	}
	empty := xlo > xhi

	// Layout: title on top, legend on the right, labels left and below.
	top := 16.0
	if l.Title != "" {
		top = 38
		text(&b, linesWidth/2, 22, `text-anchor="middle" font-size="15" font-weight="bold"`, l.Title)
	}
	legendW := 0.0
	if !empty {
		for _, s := range l.Series {
			legendW = math.Max(legendW, textWidth(s.Name))
		}
		legendW = math.Min(legendW, 160) + 40
	}
	left, right, bottom := 72.0, float64(linesWidth)-16-legendW, float64(linesHeight)-50
	ax.p0, ax.p1 = left, right
	ay.p0, ay.p1 = bottom, top

	if empty {
		b.WriteString(`<rect x="` + num(left) + `" y="` + num(top) + `" width="` + num(right-left) + `" height="` + num(bottom-top) + `" fill="none" stroke="#888888"/>`)
		text(&b, (left+right)/2, (top+bottom)/2, `text-anchor="middle" fill="#555555"`, "no data")
		l.labels(&b, left, right, top, bottom)
		b.WriteString("</svg>")
		return b.String()
	}

	if l.LogX {
		ax.ticks, ax.lo, ax.hi = logTicks(xlo, xhi)
	} else {
		ax.ticks, ax.lo, ax.hi = linearTicks(xlo, xhi, 6)
	}
	if l.LogY {
		ay.ticks, ay.lo, ay.hi = logTicks(ylo, yhi)
	} else {
		ay.ticks, ay.lo, ay.hi = linearTicks(ylo, yhi, 6)
	}

	// Grid, frame and ticks.
	var grid, marks strings.Builder
	for _, t := range ax.ticks {
		x := num(ax.px(t.v))
		size := 6.0
		if t.minor {
			size = 3
		} else {
			grid.WriteString("M" + x + " " + num(top) + "V" + num(bottom))
		}
		marks.WriteString("M" + x + " " + num(bottom) + "v" + num(size))
		if !t.minor {
			tickLabel(&b, ax.px(t.v), bottom+19, `text-anchor="middle"`, t)
		}
	}
	for _, t := range ay.ticks {
		y := num(ay.px(t.v))
		size := 6.0
		if t.minor {
			size = 3
		} else {
			grid.WriteString("M" + num(left) + " " + y + "H" + num(right))
		}
		marks.WriteString("M" + num(left) + " " + y + "h-" + num(size))
		if !t.minor {
			tickLabel(&b, left-9, ay.px(t.v)+4, `text-anchor="end"`, t)
		}
	}
	b.WriteString(`<path d="` + grid.String() + `" stroke="#e4e4e4" fill="none"/>`)
	b.WriteString(`<path d="` + marks.String() + `" stroke="#333333" fill="none"/>`)
	b.WriteString(`<rect x="` + num(left) + `" y="` + num(top) + `" width="` + num(right-left) + `" height="` + num(bottom-top) + `" fill="none" stroke="#333333"/>`)
	l.labels(&b, left, right, top, bottom)

	// Curves: a line broken at skipped points, then markers.
	for k, s := range l.Series {
		colour := okabeIto[k%len(okabeIto)]
		shape := k % len(shapes)
		var line, dots strings.Builder
		n := min(len(s.X), len(s.Y))
		pen := false
		count := 0
		for i := 0; i < n; i++ {
			if !ax.ok(s.X[i]) || !ay.ok(s.Y[i]) {
				pen = false
				continue
			}
			count++
			x, y := ax.px(s.X[i]), ay.px(s.Y[i])
			if pen {
				line.WriteString("L")
			} else {
				line.WriteString("M")
			}
			line.WriteString(num(x) + " " + num(y))
			pen = true
			marker(&dots, shape, x, y)
		}
		b.WriteString(`<path d="` + line.String() + `" stroke="` + colour + `" stroke-width="1.8" fill="none" stroke-linejoin="round"/>`)
		if count <= 200 {
			b.WriteString(`<path d="` + dots.String() + `" ` + shapeStyle(shape, colour) + `/>`)
		}
		// Legend entry.
		ly := top + 10 + 20*float64(k)
		lx := right + 14
		b.WriteString(`<path d="M` + num(lx) + " " + num(ly) + "h24" + `" stroke="` + colour + `" stroke-width="1.8"/>`)
		var m strings.Builder
		marker(&m, shape, lx+12, ly)
		b.WriteString(`<path d="` + m.String() + `" ` + shapeStyle(shape, colour) + `/>`)
		name := s.Name
		if r := []rune(name); len(r) > 23 {
			name = string(r[:22]) + "…"
		}
		text(&b, lx+30, ly+4, "", name)
	}

	if l.Slope != 0 && l.LogX && l.LogY {
		slopeTriangle(&b, &ax, &ay, l.Slope)
	}
	b.WriteString("</svg>")
	return b.String()
}

// labels writes the axis labels.
func (l Lines) labels(b *strings.Builder, left, right, top, bottom float64) {
	if l.XLabel != "" {
		text(b, (left+right)/2, bottom+40, `text-anchor="middle"`, l.XLabel)
	}
	if l.YLabel != "" {
		cy := (top + bottom) / 2
		text(b, 18, cy, `text-anchor="middle" transform="rotate(-90 18 `+num(cy)+`)"`, l.YLabel)
	}
}

// tickLabel writes a tick label, as 10 with a raised exponent on log axes.
func tickLabel(b *strings.Builder, x, y float64, attrs string, t tick) {
	if !t.sup {
		text(b, x, y, attrs, t.label)
		return
	}
	exp := strings.Replace(t.label, "-", "\u2212", 1)
	b.WriteString(`<text x="` + num(x) + `" y="` + num(y) + `" ` + attrs + `>10<tspan dy="-0.5em" font-size="9">` + esc(exp) + "</tspan></text>")
}

// slopeTriangle draws a right triangle whose hypotenuse has the given
// slope in decades per decade, in the lower corner the data of a typical
// convergence plot leave free: lower left for negative slopes (errors
// falling with the number of unknowns), lower right for positive ones.
func slopeTriangle(b *strings.Builder, ax, ay *axis, slope float64) {
	w := ax.p1 - ax.p0
	h := ay.p0 - ay.p1
	decX := math.Log10(ax.hi) - math.Log10(ax.lo)
	decY := math.Log10(ay.hi) - math.Log10(ay.lo)
	pxPerDecX, pxPerDecY := w/decX, h/decY
	run := 0.18 * w // horizontal leg, px
	rise := math.Abs(slope) * run / pxPerDecX * pxPerDecY
	if rise > 0.35*h {
		run *= 0.35 * h / rise
		rise = 0.35 * h
	}
	y0 := ay.p0 - 0.1*h // bottom leg
	var x0, x1 float64
	var d string
	if slope < 0 {
		x0 = ax.p0 + 0.1*w
		x1 = x0 + run
		d = "M" + num(x0) + " " + num(y0-rise) + "L" + num(x1) + " " + num(y0) + "H" + num(x0) + "Z"
	} else {
		x1 = ax.p1 - 0.1*w
		x0 = x1 - run
		d = "M" + num(x0) + " " + num(y0) + "L" + num(x1) + " " + num(y0-rise) + "V" + num(y0) + "Z"
	}
	b.WriteString(`<path d="` + d + `" fill="#f2f2f2" stroke="#555555"/>`)
	label := "slope " + strings.Replace(strconv.FormatFloat(slope, 'g', 3, 64), "-", "\u2212", 1)
	text(b, (x0+x1)/2, y0+15, `text-anchor="middle" fill="#333333"`, label)
}

// Marker shapes, distinct per series so that curves stay apart without
// colour: circle, square, triangle, diamond, triangle down, plus, cross.
var shapes = []string{"circle", "square", "triangle", "diamond", "down", "plus", "cross"}

const markerR = 3.6

// marker appends the path of one marker centred at (x, y).
func marker(b *strings.Builder, shape int, x, y float64) {
	r := markerR
	switch shapes[shape] {
	case "circle":
		b.WriteString("M" + num(x-r) + " " + num(y) + "a" + num(r) + " " + num(r) + " 0 1 0 " + num(2*r) + " 0a" + num(r) + " " + num(r) + " 0 1 0 -" + num(2*r) + " 0Z")
	case "square":
		s := 0.9 * r
		b.WriteString("M" + num(x-s) + " " + num(y-s) + "h" + num(2*s) + "v" + num(2*s) + "h-" + num(2*s) + "Z")
	case "triangle":
		b.WriteString("M" + num(x) + " " + num(y-1.2*r) + "L" + num(x+1.1*r) + " " + num(y+0.8*r) + "H" + num(x-1.1*r) + "Z")
	case "diamond":
		b.WriteString("M" + num(x) + " " + num(y-1.3*r) + "L" + num(x+r) + " " + num(y) + "L" + num(x) + " " + num(y+1.3*r) + "L" + num(x-r) + " " + num(y) + "Z")
	case "down":
		b.WriteString("M" + num(x) + " " + num(y+1.2*r) + "L" + num(x+1.1*r) + " " + num(y-0.8*r) + "H" + num(x-1.1*r) + "Z")
	case "plus":
		b.WriteString("M" + num(x-1.2*r) + " " + num(y) + "h" + num(2.4*r) + "M" + num(x) + " " + num(y-1.2*r) + "v" + num(2.4*r))
	case "cross":
		s := 0.9 * r
		b.WriteString("M" + num(x-s) + " " + num(y-s) + "l" + num(2*s) + " " + num(2*s) + "M" + num(x-s) + " " + num(y+s) + "l" + num(2*s) + " -" + num(2*s))
	}
}

// shapeStyle fills closed markers and strokes open ones.
func shapeStyle(shape int, colour string) string {
	switch shapes[shape] {
	case "plus", "cross":
		return `fill="none" stroke="` + colour + `" stroke-width="1.8"`
	}
	return `fill="` + colour + `" stroke="#ffffff" stroke-width="0.6"`
}

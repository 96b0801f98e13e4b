package notebook

import (
	"fmt"
	"html"
	"math"
	"strings"
)

// This file is the one place that calls the mathematics and plot packages
// (texmath, svgplot). Until they are in the tree, it carries plain
// stand-ins: mathematics as escaped source, plots as bare polylines.

// mathHTML renders TeX-like source as MathML.
func mathHTML(src string, display bool) string {
	class := "math"
	if display {
		class = "math math-block"
	}
	return `<code class="` + class + `">` + html.EscapeString(src) + `</code>`
}

// PlotSVG renders a plot as a standalone SVG image.
func PlotSVG(p Plot) string {
	const w, h, pad = 640.0, 400.0, 50.0
	var b strings.Builder
	fmt.Fprintf(&b, `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 %g %g" width="%g" height="%g" font-family="sans-serif" font-size="12">`, w, h, w, h)
	fmt.Fprintf(&b, `<text x="%g" y="20" text-anchor="middle">%s</text>`, w/2, html.EscapeString(p.Title))
	tr := func(v float64, log bool) (float64, bool) {
		if log {
			if v <= 0 {
				return 0, false
			}
			v = math.Log10(v)
		}
		return v, !math.IsNaN(v) && !math.IsInf(v, 0)
	}
	x0, x1, y0, y1 := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for _, s := range p.Series {
		for i := range min(len(s.X), len(s.Y)) {
			x, okx := tr(s.X[i], p.LogX)
			y, oky := tr(s.Y[i], p.LogY)
			if okx && oky {
				x0, x1, y0, y1 = math.Min(x0, x), math.Max(x1, x), math.Min(y0, y), math.Max(y1, y)
			}
		}
	}
	fmt.Fprintf(&b, `<rect x="%g" y="%g" width="%g" height="%g" fill="none" stroke="#444"/>`, pad, pad, w-2*pad, h-2*pad)
	fmt.Fprintf(&b, `<text x="%g" y="%g" text-anchor="middle">%s</text>`, w/2, h-12, html.EscapeString(p.XLabel))
	fmt.Fprintf(&b, `<text x="14" y="%g" transform="rotate(-90 14 %g)" text-anchor="middle">%s</text>`, h/2, h/2, html.EscapeString(p.YLabel))
	if x0 > x1 {
		fmt.Fprintf(&b, `<text x="%g" y="%g" text-anchor="middle">no data</text></svg>`, w/2, h/2)
		return b.String()
	}
	if x1 == x0 {
		x0, x1 = x0-1, x1+1
	}
	if y1 == y0 {
		y0, y1 = y0-1, y1+1
	}
	colours := []string{"#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9"}
	for k, s := range p.Series {
		var pts []string
		for i := range min(len(s.X), len(s.Y)) {
			x, okx := tr(s.X[i], p.LogX)
			y, oky := tr(s.Y[i], p.LogY)
			if okx && oky {
				pts = append(pts, fmt.Sprintf("%.1f,%.1f", pad+(x-x0)/(x1-x0)*(w-2*pad), h-pad-(y-y0)/(y1-y0)*(h-2*pad)))
			}
		}
		c := colours[k%len(colours)]
		fmt.Fprintf(&b, `<polyline fill="none" stroke="%s" stroke-width="2" points="%s"/>`, c, strings.Join(pts, " "))
		fmt.Fprintf(&b, `<text x="%g" y="%d" fill="%s">%s</text>`, w-pad-150, int(pad)+16*(k+1), c, html.EscapeString(s.Name))
	}
	b.WriteString(`</svg>`)
	return b.String()
}

// FieldSVG renders a field on a mesh as a standalone SVG colour map.
func FieldSVG(f Field) string {
	const w, h, pad = 480.0, 480.0, 30.0
	var b strings.Builder
	fmt.Fprintf(&b, `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 %g %g" width="%g" height="%g" font-family="sans-serif" font-size="12">`, w, h, w, h)
	fmt.Fprintf(&b, `<text x="%g" y="18" text-anchor="middle">%s</text>`, w/2, html.EscapeString(f.Title))
	if len(f.X) == 0 || len(f.Tri) == 0 || len(f.Y) != len(f.X) {
		fmt.Fprintf(&b, `<text x="%g" y="%g" text-anchor="middle">no data</text></svg>`, w/2, h/2)
		return b.String()
	}
	x0, x1 := minMax(f.X)
	y0, y1 := minMax(f.Y)
	v0, v1 := minMax(f.Values)
	s := (w - 2*pad) / math.Max(math.Max(x1-x0, y1-y0), 1e-300)
	for t, tri := range f.Tri {
		var v float64
		if f.PerCell {
			if t < len(f.Values) {
				v = f.Values[t]
			}
		} else {
			for _, n := range tri {
				if int(n) < len(f.Values) {
					v += f.Values[n] / 3
				}
			}
		}
		g := 0.5
		if v1 > v0 {
			g = (v - v0) / (v1 - v0)
		}
		c := int(40 + 200*g)
		var pts []string
		for _, n := range tri {
			if n < 0 || int(n) >= len(f.X) {
				continue
			}
			pts = append(pts, fmt.Sprintf("%.1f,%.1f", pad+(f.X[n]-x0)*s, h-pad-(f.Y[n]-y0)*s))
		}
		fmt.Fprintf(&b, `<polygon points="%s" fill="rgb(%d,%d,%d)"/>`, strings.Join(pts, " "), c/3, c, 255-c/2)
	}
	b.WriteString(`</svg>`)
	return b.String()
}

func minMax(v []float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, x := range v {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			lo, hi = math.Min(lo, x), math.Max(hi, x)
		}
	}
	if lo > hi {
		return 0, 1
	}
	return lo, hi
}

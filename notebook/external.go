package notebook

import (
	"gapbook/notebook/svgplot"
	"gapbook/notebook/texmath"
)

// This file is the one place that calls the mathematics and plot packages.

// mathHTML renders TeX-like source as MathML (escaped, never executed).
func mathHTML(src string, display bool) string { return texmath.MathML(src, display) }

// PlotSVG renders a plot as a standalone SVG image.
func PlotSVG(p Plot) string {
	l := svgplot.Lines{Title: p.Title, XLabel: p.XLabel, YLabel: p.YLabel, LogX: p.LogX, LogY: p.LogY}
	for _, s := range p.Series {
		l.Series = append(l.Series, svgplot.Series{Name: s.Name, X: s.X, Y: s.Y})
	}
	return l.SVG()
}

// FieldSVG renders a field on a mesh as a standalone SVG colour map.
func FieldSVG(f Field) string {
	return svgplot.Map{Title: f.Title, Label: f.Name, X: f.X, Y: f.Y, Tri: f.Tri, Values: f.Values, PerCell: f.PerCell}.SVG()
}

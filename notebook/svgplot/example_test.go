package svgplot_test

import (
	"fmt"
	"strings"

	"gapbook/notebook/svgplot"
)

func ExampleLines() {
	svg := svgplot.Lines{
		Title: "error", LogX: true, LogY: true, Slope: -1,
		Series: []svgplot.Series{{Name: "P1", X: []float64{10, 100, 1000}, Y: []float64{1e-1, 1e-2, 1e-3}}},
	}.SVG()
	fmt.Println(strings.HasPrefix(svg, `<svg xmlns="http://www.w3.org/2000/svg"`), strings.Contains(svg, "slope −1"))
	// Output: true true
}

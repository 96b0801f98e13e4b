// Package svgplot draws the notebook's charts as small standalone SVG
// documents: line plots with linear or logarithmic axes, and colour maps
// of fields on triangle meshes. Text stays text (the browser's sans-serif
// font renders it), nothing is referenced from outside, and every string
// from the caller is escaped, so the output can be inlined into a page.
package svgplot

import (
	"math"
	"strconv"
	"strings"
)

// esc escapes text for XML content and attribute values, replacing
// characters XML forbids.
func esc(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch {
		case r == '&':
			b.WriteString("&amp;")
		case r == '<':
			b.WriteString("&lt;")
		case r == '>':
			b.WriteString("&gt;")
		case r == '"':
			b.WriteString("&quot;")
		case r == '\'':
			b.WriteString("&#39;")
		case r == '\t' || r == '\n' || r == '\r':
			b.WriteByte(' ')
		case r < 0x20, r >= 0xD800 && r <= 0xDFFF, r == 0xFFFE, r == 0xFFFF:
			b.WriteRune('\uFFFD')
		default:
			b.WriteRune(r)
		}
	}
	return b.String()
}

// num writes a coordinate rounded to 0.1 px.
func num(v float64) string {
	return strconv.FormatFloat(math.Round(v*10)/10, 'f', -1, 64)
}

// svgOpen starts a document of w×h px with the shared text style.
func svgOpen(b *strings.Builder, w, h int, title string) {
	b.WriteString(`<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ` + strconv.Itoa(w) + " " + strconv.Itoa(h) +
		`" width="` + strconv.Itoa(w) + `" height="` + strconv.Itoa(h) +
		`" font-family="sans-serif" font-size="12" role="img">`)
	if title != "" {
		b.WriteString("<title>" + esc(title) + "</title>")
	}
	b.WriteString(`<rect width="100%" height="100%" fill="#ffffff"/>`)
}

// text writes a text element; attrs are trusted, s is escaped.
func text(b *strings.Builder, x, y float64, attrs, s string) {
	b.WriteString(`<text x="` + num(x) + `" y="` + num(y) + `"`)
	if attrs != "" {
		b.WriteString(" " + attrs)
	}
	b.WriteString(">" + esc(s) + "</text>")
}

// textWidth estimates the width of s at 12 px sans-serif, for layout.
func textWidth(s string) float64 {
	return 6.8 * float64(len([]rune(s)))
}

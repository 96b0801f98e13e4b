package notebook

import (
	"bytes"
	"fmt"
	"html"
	"maps"
	"slices"
	"strconv"
	"strings"
)

// esc escapes text from a file for HTML content and attribute values.
func esc(s string) string { return html.EscapeString(s) }

// FormatNumber writes v for people: up to 6 significant digits.
func FormatNumber(v float64) string { return strconv.FormatFloat(v, 'g', 6, 64) }

// RenderResults renders results as a safe HTML fragment: scalars and
// intervals as tables with their labels, tables, plots and fields as
// inline SVG.
func RenderResults(r *Results) string {
	if r == nil {
		return ""
	}
	var b strings.Builder
	if len(r.Scalars) > 0 {
		b.WriteString(`<table class="scalars"><thead><tr><th>result</th><th>value</th><th>label</th><th>unit or meaning</th></tr></thead><tbody>`)
		for _, s := range r.Scalars {
			fmt.Fprintf(&b, `<tr><td>%s</td><td class="num">%s</td><td><span class="label label-%s">%s</span></td><td>%s</td></tr>`,
				esc(s.Name), esc(FormatNumber(s.Value)), labelClass(s.Label), esc(string(s.Label)), esc(s.Unit))
		}
		b.WriteString(`</tbody></table>`)
	}
	if len(r.Intervals) > 0 {
		b.WriteString(`<table class="intervals"><thead><tr><th>interval</th><th>lower</th><th>upper</th><th>label</th><th>encloses</th></tr></thead><tbody>`)
		for _, iv := range r.Intervals {
			fmt.Fprintf(&b, `<tr><td>%s</td><td class="num">%s</td><td class="num">%s</td><td><span class="label label-%s">%s</span></td><td>%s</td></tr>`,
				esc(iv.Name), esc(FormatNumber(iv.Lower)), esc(FormatNumber(iv.Upper)), labelClass(iv.Label), esc(string(iv.Label)), esc(iv.Unit))
		}
		b.WriteString(`</tbody></table>`)
	}
	for _, t := range r.Tables {
		b.WriteString(RenderTable(t))
	}
	for _, p := range r.Plots {
		b.WriteString(`<figure class="plot">` + PlotSVG(p) + `</figure>`)
	}
	for _, f := range r.Fields {
		b.WriteString(`<figure class="field">` + FieldSVG(f) + `<figcaption>` + esc(f.Name) + `</figcaption></figure>`)
	}
	return b.String()
}

func labelClass(l Label) string {
	if l.Valid() {
		return string(l)
	}
	return "unknown"
}

// RenderTable renders a table as an HTML table.
func RenderTable(t Table) string {
	var b strings.Builder
	b.WriteString(`<table class="data">`)
	if t.Title != "" || t.Name != "" {
		cap := t.Title
		if cap == "" {
			cap = t.Name
		}
		b.WriteString(`<caption>` + esc(cap) + `</caption>`)
	}
	b.WriteString(`<thead><tr>`)
	if len(t.Labels) > 0 {
		b.WriteString(`<th></th>`)
	}
	for _, c := range t.Columns {
		h := esc(c.Name)
		if c.Unit != "" {
			h += ` <span class="unit">[` + esc(c.Unit) + `]</span>`
		}
		b.WriteString(`<th>` + h + `</th>`)
	}
	b.WriteString(`</tr></thead><tbody>`)
	for i, row := range t.Rows {
		b.WriteString(`<tr>`)
		if len(t.Labels) > 0 {
			l := ""
			if i < len(t.Labels) {
				l = t.Labels[i]
			}
			b.WriteString(`<th>` + esc(l) + `</th>`)
		}
		for _, v := range row {
			b.WriteString(`<td class="num">` + esc(FormatNumber(v)) + `</td>`)
		}
		b.WriteString(`</tr>`)
	}
	b.WriteString(`</tbody></table>`)
	return b.String()
}

// RenderInputs renders the inputs of a cell as a definition list, in the
// order the kind declares them, then inputs the kind does not know.
func RenderInputs(c *Cell) string {
	var names []string
	if k, ok := Lookup(c.Kind); ok {
		for _, in := range k.Inputs() {
			if _, set := c.Inputs[in.Name]; set {
				names = append(names, in.Name)
			}
		}
	}
	for _, n := range slices.Sorted(maps.Keys(c.Inputs)) {
		if !slices.Contains(names, n) {
			names = append(names, n)
		}
	}
	if len(names) == 0 {
		return ""
	}
	var b strings.Builder
	b.WriteString(`<dl class="inputs">`)
	for _, n := range names {
		b.WriteString(`<dt>` + esc(n) + `</dt><dd><code>` + esc(Clip(string(c.Inputs[n]), 400)) + `</code></dd>`)
	}
	b.WriteString(`</dl>`)
	return b.String()
}

// RenderCell renders one cell with its outcome (which may be nil) as a
// safe HTML fragment: inputs beside results, the error if any.
func RenderCell(c *Cell, o *Outcome) string {
	var b strings.Builder
	status := StatusStale
	if o != nil {
		status = o.Status
	}
	fmt.Fprintf(&b, `<section class="cell cell-%s status-%s" id="cell-%s">`, esc(classWord(c.Kind)), status, esc(c.ID))
	fmt.Fprintf(&b, `<header><span class="cell-id">%s</span> <span class="cell-kind">%s</span> <span class="cell-status">%s</span></header>`, esc(c.ID), esc(c.Kind), status)
	k, known := Lookup(c.Kind)
	var res *Results
	if o != nil {
		res = o.Results
	}
	if rd, ok := k.(Renderer); known && ok {
		vals, _ := ParseInputs(k, c.Inputs)
		b.WriteString(`<div class="cell-body">` + rd.RenderHTML(vals, res) + `</div>`)
	} else {
		b.WriteString(`<div class="cell-inputs">` + RenderInputs(c) + `</div>`)
		b.WriteString(`<div class="cell-results">` + RenderResults(res) + `</div>`)
	}
	if o != nil && o.Err != nil {
		b.WriteString(`<p class="cell-error">` + esc(o.Err.Error()) + `</p>`)
	}
	if o != nil && o.Reproduced != "" && len(o.Results.Scalars)+len(o.Results.Tables)+len(o.Results.Plots)+len(o.Results.Fields) > 0 {
		if o.Reproduced == "yes" {
			how := " (digest " + o.Digest[:12] + "…)"
			if len(o.Differences) > 0 {
				how = "; " + o.Differences[0]
			}
			b.WriteString(`<p class="reproduced">reproduced the saved results` + esc(how) + `</p>`)
		} else {
			b.WriteString(`<div class="not-reproduced"><p>differs from the saved results:</p><ul>`)
			for _, d := range o.Differences {
				b.WriteString(`<li>` + esc(d) + `</li>`)
			}
			b.WriteString(`</ul></div>`)
		}
	}
	b.WriteString(`</section>`)
	return b.String()
}

func classWord(s string) string {
	return strings.Map(func(r rune) rune {
		if r >= 'a' && r <= 'z' || r >= '0' && r <= '9' {
			return r
		}
		return '-'
	}, Clip(s, 40))
}

// Caution is the text every report carries near the top.
const Caution = "These bounds cover the mathematical model as entered, and nothing else: " +
	"they do not say whether a power law or a boundary condition fits the material, " +
	"nor anything about errors in the data. Design decisions for structures, pipelines " +
	"or medical devices belong to the applicable codes and to licensed engineers."

const reportStyle = `body{font-family:sans-serif;max-width:60rem;margin:2rem auto;padding:0 1rem;color:#222;line-height:1.45}
.caution{border:2px solid #b35900;padding:.6rem 1rem;background:#fff6ec}
.cell{border-top:1px solid #bbb;padding:.6rem 0;break-inside:avoid}
.cell header{font-size:.9rem;color:#555;margin-bottom:.3rem}
.cell-id{font-weight:bold;color:#222}.cell-status{float:right}
.status-error .cell-status,.cell-error{color:#a00}
table{border-collapse:collapse;margin:.4rem 0}td,th{border:1px solid #ccc;padding:.15rem .5rem}
td.num{text-align:right;font-variant-numeric:tabular-nums}
.label{padding:0 .3rem;border-radius:.2rem}.label-guaranteed{background:#dbeede}.label-estimate{background:#fdf1d0}.label-reference{background:#e2e8f4}
dl.inputs{display:grid;grid-template-columns:max-content auto;gap:.1rem .8rem}dl.inputs dd{margin:0}
figure{margin:.5rem 0}svg{max-width:100%;height:auto}
@media print{body{margin:0}}`

// Report renders a self-contained printable HTML page: title, caution,
// every cell's inputs and results, plots inline as SVG, no scripts. A
// Content-Security-Policy forbids scripts and outside resources even if
// something slipped through.
func Report(nb *Notebook, ev *Evaluation) []byte {
	var b bytes.Buffer
	title := nb.Title
	if title == "" {
		title = "gapbook report"
	}
	b.WriteString("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">")
	b.WriteString(`<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">`)
	b.WriteString(`<meta name="viewport" content="width=device-width, initial-scale=1">`)
	b.WriteString("<title>" + esc(title) + "</title><style>" + reportStyle + "</style></head><body>\n")
	b.WriteString("<h1>" + esc(title) + "</h1>\n")
	b.WriteString(`<p class="caution"><strong>Caution.</strong> ` + esc(Caution) + "</p>\n")
	if ev != nil {
		ok, failed, stale := 0, 0, 0
		for _, o := range ev.Cells {
			switch o.Status {
			case StatusOK:
				ok++
			case StatusError:
				failed++
			default:
				stale++
			}
		}
		fmt.Fprintf(&b, "<p class=\"summary\">%d cells: %d ok, %d failed, %d not evaluated.</p>\n", len(ev.Cells), ok, failed, stale)
	}
	for _, c := range nb.Cells {
		var o *Outcome
		if ev != nil {
			o = ev.Cell(c.ID)
		}
		b.WriteString(RenderCell(c, o))
		b.WriteByte('\n')
	}
	b.WriteString("</body></html>\n")
	return b.Bytes()
}

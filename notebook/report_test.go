package notebook

import (
	"regexp"
	"strings"
	"testing"
)

// inert fails when html could run script: a script element, an event
// handler attribute, or a javascript:, vbscript: or data: URL.
func inert(t *testing.T, src, html string) {
	t.Helper()
	low := strings.ToLower(html)
	if strings.Contains(low, "<script") {
		t.Errorf("%q → <script in %s", src, html)
	}
	// Attribute values are always double-quoted in our output; look for
	// event handlers among the attribute names only.
	quoted := regexp.MustCompile(`"[^"]*"`)
	for _, tag := range regexp.MustCompile(`<[^>]*>`).FindAllString(low, -1) {
		if regexp.MustCompile(`\son[a-z]+\s*=`).MatchString(quoted.ReplaceAllString(tag, `""`)) {
			t.Errorf("%q → event handler attribute in %s", src, tag)
		}
	}
	for _, bad := range []string{"javascript:", "vbscript:", "data:"} {
		if regexp.MustCompile(`(href|src)\s*=\s*"?\s*` + bad).MatchString(low) {
			t.Errorf("%q → %s URL in %s", src, bad, html)
		}
	}
	if strings.Contains(low, "<img") || strings.Contains(low, "<iframe") {
		t.Errorf("%q → element that loads something in %s", src, html)
	}
}

func TestReportInertAndComplete(t *testing.T) {
	nb := chain()
	nb.Title = `<script>alert(1)</script>"onload="x`
	nb.Cells = append(nb.Cells, cell("n", "note", map[string]any{"text": "[x](javascript:alert(1)) <b onmouseover=alert(1)>"}))
	nb.Cells[0].Inputs[`<img src=x onerror=alert(1)>`] = []byte(`"<script>"`)
	nb.Cells[1].SetInput("mode", "fail")
	ev := mustEval(t, NewEngine(), nb, Options{})
	html := string(Report(nb, ev))
	inert(t, "report", html)
	for _, want := range []string{"&lt;script&gt;alert(1)&lt;/script&gt;", "Caution.", "licensed engineers", "needs cell b, which failed", "cell b: input mode: asked to fail", `<td class="num">7</td>`, "Content-Security-Policy"} {
		if !strings.Contains(html, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	if i, j := strings.Index(html, "Caution."), strings.Index(html, `class="cell `); i < 0 || j < i {
		t.Error("the caution must come before the cells")
	}
}

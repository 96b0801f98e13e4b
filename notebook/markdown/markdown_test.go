package markdown

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

func TestMarkdownHostile(t *testing.T) {
	srcs := []string{
		"<script>alert(1)</script>",
		"a <script>alert(1)</script> b",
		`<img src=x onerror="alert(1)">`,
		`<a href="javascript:alert(1)">x</a>`,
		"[x](javascript:alert(1))",
		"[x](JaVaScRiPt:alert(1))",
		"[x](java%0ascript:alert(1))",
		"[x](<java\tscript:alert(1)>)",
		"[x](vbscript:msgbox)",
		"[x](data:text/html;base64,PHNjcmlwdD4=)",
		"![y](data:image/svg+xml;base64,PHN2Zz4=)",
		"![y](https://tracker.example/pixel.png)",
		"<javascript:alert(1)>",
		"[x][r]\n\n[r]: javascript:alert(1)",
		`[x](https://ok.example "title\" onmouseover=\"alert(1)")`,
		"$<script>alert(1)</script>$",
		"$$\n</code><script>alert(1)</script>\n$$",
		"<div onclick=alert(1)>x</div>",
		"<iframe src=https://x.example></iframe>",
	}
	for _, s := range srcs {
		inert(t, s, Render(s))
	}
}

func TestMarkdownLinksAndMath(t *testing.T) {
	tests := []struct{ src, want, absent string }{
		{"[doc](https://example.org/a)", `<a href="https://example.org/a" rel="noopener noreferrer nofollow">doc</a>`, ""},
		{"[up](#results)", `<a href="#results">up</a>`, ""},
		{"[x](javascript:alert(1))", "<p>x</p>", "<a"},
		{"[rel](../secret.txt)", "<p>rel</p>", "<a"},
		{"<mailto:a@b.c>", "a@b.c", "<a"},
		{"![a plot](https://x.example/p.png)", `<span class="image-omitted">[image: a plot]</span>`, "<img"},
		{"energy $J(u) < 0$ here", `<p>energy <math xmlns="http://www.w3.org/1998/Math/MathML"><mi>J</mi>`, "<code"},
		{"$u < 0$", `<mo>&lt;</mo><mn>0</mn></math>`, ""},
		{"prices $5 and $10", "prices $5 and $10", "math"},
		{`a \$ sign $x$`, `a $ sign <math xmlns="http://www.w3.org/1998/Math/MathML"><mi>x</mi></math>`, ""},
		{"$$\\int_\\Omega f$$", `<div class="math-display"><math xmlns="http://www.w3.org/1998/Math/MathML" display="block"><msub><mo>∫</mo>`, ""},
		{"$$x$$\n\nafter $y$", `</math></div>
<p>after <math xmlns="http://www.w3.org/1998/Math/MathML"><mi>y</mi></math></p>`, ""},
		{"inline $$x$$ display", `inline <math xmlns="http://www.w3.org/1998/Math/MathML" display="block"><mi>x</mi></math> display`, ""},
		{"text\n$$\na^2 + b^2\n$$\nmore", `<p>text</p>
<div class="math-display"><math xmlns="http://www.w3.org/1998/Math/MathML" display="block"><msup><mi>a</mi><mn>2</mn></msup><mo>+</mo>`, ""},
	}
	for _, tt := range tests {
		got := Render(tt.src)
		if !strings.Contains(got, tt.want) || tt.absent != "" && strings.Contains(got, tt.absent) {
			t.Errorf("%q → %q; want %q without %q", tt.src, got, tt.want, tt.absent)
		}
	}
}

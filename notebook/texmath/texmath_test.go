package texmath

import (
	"encoding/xml"
	"fmt"
	"io"
	"strings"
	"testing"
)

const head = `<math xmlns="http://www.w3.org/1998/Math/MathML">`

// TestMathML checks sources against the MathML they must contain. The
// expected markup follows the MathML Core element definitions (W3C MathML
// Core, 2023): mi/mn/mo tokens, msub/msup/msubsup, mfrac, msqrt, mroot,
// munderover, mtable.
func TestMathML(t *testing.T) {
	tests := []struct {
		src     string
		display bool
		want    []string
	}{
		{`x`, false, []string{head + `<mi>x</mi></math>`}},
		{`12.5`, false, []string{`<mn>12.5</mn>`}},
		{`a-b`, false, []string{`<mi>a</mi><mo>−</mo><mi>b</mi>`}},
		{`x_i`, false, []string{`<msub><mi>x</mi><mi>i</mi></msub>`}},
		{`x^{p-2}`, false, []string{`<msup><mi>x</mi><mrow><mi>p</mi><mo>−</mo><mn>2</mn></mrow></msup>`}},
		{`x_i^2`, false, []string{`<msubsup><mi>x</mi><mi>i</mi><mn>2</mn></msubsup>`}},
		{`x^2_i`, false, []string{`<msubsup><mi>x</mi><mi>i</mi><mn>2</mn></msubsup>`}},
		{`u'`, false, []string{`<msup><mi>u</mi><mo>′</mo></msup>`}},
		{`\frac12`, false, []string{`<mfrac><mn>1</mn><mn>2</mn></mfrac>`}},
		{`\frac{a+b}{c}`, false, []string{`<mfrac><mrow><mi>a</mi><mo>+</mo><mi>b</mi></mrow><mi>c</mi></mfrac>`}},
		{`\sqrt{x}`, false, []string{`<msqrt><mi>x</mi></msqrt>`}},
		{`\sqrt[n]{x}`, false, []string{`<mroot><mi>x</mi><mi>n</mi></mroot>`}},
		{`\alpha\Omega\varepsilon\vartheta`, false, []string{`<mi>α</mi><mi mathvariant="normal">Ω</mi><mi>ε</mi><mi>ϑ</mi>`}},
		{`\nabla\partial\Delta\infty`, false, []string{`<mi mathvariant="normal">∇</mi><mi mathvariant="normal">∂</mi><mi mathvariant="normal">Δ</mi><mi mathvariant="normal">∞</mi>`}},
		{`a\le b\ge c\leq d\geq e\ne f\neq g\approx h`, false, []string{`<mo>≤</mo>`, `<mo>≥</mo>`, `<mo>≠</mo>`, `<mo>≈</mo>`}},
		{`x\in\Omega\subset\mathbb{R}^2`, false, []string{`<mo>∈</mo>`, `<mo>⊂</mo>`, `<msup><mi>ℝ</mi><mn>2</mn></msup>`}},
		{`f\colon x\mapsto y\to z`, false, []string{`<mo>↦</mo>`, `<mo>→</mo>`}},
		{`a\pm b\mp c\cdot d\times e`, false, []string{`<mo>±</mo>`, `<mo>∓</mo>`, `<mo>⋅</mo>`, `<mo>×</mo>`}},
		{`1,\ldots,n\cdots`, false, []string{`<mo>…</mo>`, `<mo>⋯</mo>`}},
		{`\sum_{i=1}^n a_i`, true, []string{`<munderover><mo>∑</mo><mrow><mi>i</mi><mo>=</mo><mn>1</mn></mrow><mi>n</mi></munderover>`}},
		{`\sum_{i=1}^n a_i`, false, []string{`<msubsup><mo>∑</mo><mrow><mi>i</mi><mo>=</mo><mn>1</mn></mrow><mi>n</mi></msubsup>`}},
		{`\int_\Omega f`, true, []string{`<msub><mo>∫</mo><mi mathvariant="normal">Ω</mi></msub>`}},
		{`\iint\oint\prod`, false, []string{`<mo>∬</mo><mo>∮</mo><mo>∏</mo>`}},
		{`\lim_{h\to0}`, true, []string{`<munder><mi>lim</mi><mrow><mi>h</mi><mo>→</mo><mn>0</mn></mrow></munder><mo>` + "\u2061" + `</mo>`}},
		{`\sup_x`, false, []string{`<msub><mi>sup</mi><mi>x</mi></msub>`}},
		{`\log x`, false, []string{`<mi>log</mi><mo>` + "\u2061" + `</mo><mspace width="0.1667em"/><mi>x</mi>`}},
		{`\exp(x)`, false, []string{`<mi>exp</mi><mo>` + "\u2061" + `</mo><mo stretchy="false">(</mo>`}},
		{`\sin\cos\max\min\inf`, false, []string{`<mi>sin</mi>`, `<mi>cos</mi>`, `<mi>max</mi>`, `<mi>min</mi>`, `<mi>inf</mi>`}},
		{`\left( x \right)`, false, []string{`<mrow><mo fence="true" stretchy="true" symmetric="true">(</mo><mi>x</mi><mo fence="true" stretchy="true" symmetric="true">)</mo></mrow>`}},
		{`\left\| x \right.`, false, []string{`<mrow><mo fence="true" stretchy="true" symmetric="true">‖</mo><mi>x</mi></mrow>`}},
		{`\left\langle a \middle| b \right\rangle`, false, []string{`>⟨</mo>`, `<mo stretchy="true" symmetric="true">|</mo>`, `>⟩</mo>`}},
		{`\big( \Bigr]`, false, []string{`<mrow><mo stretchy="true" symmetric="true" minsize="1.2em" maxsize="1.2em">(</mo></mrow>`, `minsize="1.8em" maxsize="1.8em">]</mo>`}},
		{`\|u\|`, false, []string{`<mo stretchy="false" lspace="0" rspace="0">‖</mo><mi>u</mi><mo stretchy="false" lspace="0" rspace="0">‖</mo>`}},
		{`|x|`, false, []string{`<mo stretchy="false" lspace="0" rspace="0">|</mo><mi>x</mi><mo stretchy="false" lspace="0" rspace="0">|</mo>`}},
		{`\mathrm{d}x`, false, []string{`<mi mathvariant="normal">d</mi><mi>x</mi>`}},
		{`\mathrm{div}`, false, []string{`<mi>div</mi>`}},
		{`\mathbf{u}`, false, []string{`<mi>𝐮</mi>`}},
		{`\mathcal{T}\mathcal{E}`, false, []string{`<mi>𝒯</mi><mi>ℰ</mi>`}},
		{`\text{if } x`, false, []string{"<mtext>if\u00a0</mtext><mi>x</mi>"}},
		{`a=-b+(-c)`, false, []string{`<mo>=</mo><mo form="prefix">−</mo><mi>b</mi><mo>+</mo><mo stretchy="false">(</mo><mo form="prefix">−</mo>`}},
		{`-x`, false, []string{head + `<mo form="prefix">−</mo>`}},
		{`a/b`, false, []string{`<mi>a</mi><mo lspace="0" rspace="0">/</mo><mi>b</mi>`}},
		{`\|u\|^2+(a)-|b|-c^2-\sum_i -1`, false, []string{`</msup><mo>+</mo>`, `)</mo><mo>−</mo>`, `|</mo><mo>−</mo>`, `</msup><mo>−</mo>`, `</msub><mo form="prefix">−</mo>`}},
		{`\operatorname{osc}(f)`, false, []string{`<mi>osc</mi><mo>` + "\u2061" + `</mo>`}},
		{`\hat u\bar v\tilde w\dot x\overline{ab}`, false, []string{
			`<mover accent="true"><mi>u</mi><mo stretchy="false">^</mo></mover>`,
			`<mover accent="true"><mi>v</mi><mo stretchy="false">¯</mo></mover>`,
			`<mover accent="true"><mi>w</mi><mo stretchy="false">~</mo></mover>`,
			`<mover accent="true"><mi>x</mi><mo stretchy="false">˙</mo></mover>`,
			`<mover accent="true"><mrow><mi>a</mi><mi>b</mi></mrow><mo stretchy="true">‾</mo></mover>`}},
		{`a\quad b\qquad c\,d\;e`, false, []string{`<mspace width="1em"/>`, `<mspace width="2em"/>`, `<mspace width="0.1667em"/>`, `<mspace width="0.2778em"/>`}},
		{`{a}`, false, []string{head + `<mi>a</mi></math>`}},
		{`αβ≤`, false, []string{`<mi>α</mi><mi>β</mi><mo>≤</mo>`}},
		{`\begin{aligned} a &= b \\ c &\le d \end{aligned}`, true, []string{
			`<mtable displaystyle="true"><mtr><mtd columnalign="right"`, `<mrow></mrow><mo>=</mo><mi>b</mi></mtd></mtr><mtr>`}},
		{`\begin{cases} 1 & x>0 \\ 0 & x\le0 \end{cases}`, false, []string{`>{</mo><mtable displaystyle="false"><mtr><mtd columnalign="left"`}},
		{`\begin{pmatrix} a & b \\ c & d \end{pmatrix}`, false, []string{`>(</mo><mtable`, `</mtable><mo fence="true" stretchy="true" symmetric="true">)</mo>`}},
		{`a \\ b`, true, []string{`<mtable displaystyle="true"><mtr><mtd><mi>a</mi></mtd></mtr><mtr><mtd><mi>b</mi></mtd></mtr></mtable>`}},
		{`x`, true, []string{`<math xmlns="http://www.w3.org/1998/Math/MathML" display="block">`}},
		// Errors are shown, never dropped.
		{`\foo x`, false, []string{`<mtext class="math-error" style="color:#b00020;background:#fde8ec">unknown command \foo</mtext><mi>x</mi>`}},
		{`\frac{a`, false, []string{`missing }`}},
		{`a}`, false, []string{`unmatched }`}},
		{`\left( a`, false, []string{`\left without \right`}},
		{`\right)`, false, []string{`\right without its opening`}},
		{`x^`, false, []string{`missing argument at the end`}},
		{`x^1^2`, false, []string{`double superscript`}},
		{`\begin{tabular}`, false, []string{`unknown environment`}},
		{`\begin{aligned} a \end{cases}`, false, []string{`ended by \end{cases}`}},
		{`a & b`, false, []string{`&amp; outside a table`}},
	}
	for _, tt := range tests {
		got := MathML(tt.src, tt.display)
		for _, w := range tt.want {
			if !strings.Contains(got, w) {
				t.Errorf("MathML(%q, %v)\n got %s\nwant it to contain %s", tt.src, tt.display, got, w)
			}
		}
		if err := wellFormed(got); err != nil {
			t.Errorf("MathML(%q): not well-formed XML: %v\n%s", tt.src, err, got)
		}
	}
}

// allowedElements is the MathML Core vocabulary the renderer may emit.
var allowedElements = map[string]bool{
	"math": true, "mi": true, "mn": true, "mo": true, "mtext": true, "mspace": true,
	"mrow": true, "mfrac": true, "msqrt": true, "mroot": true, "msub": true,
	"msup": true, "msubsup": true, "munder": true, "mover": true, "munderover": true,
	"mtable": true, "mtr": true, "mtd": true, "mstyle": true,
}

// arity is the number of children MathML Core requires.
var arity = map[string]int{
	"mfrac": 2, "mroot": 2, "msub": 2, "msup": 2, "munder": 2, "mover": 2,
	"msubsup": 3, "munderover": 3,
}

var allowedAttrs = map[string]bool{
	"xmlns": true, "display": true, "mathvariant": true, "stretchy": true,
	"symmetric": true, "fence": true, "minsize": true, "maxsize": true, "width": true,
	"accent": true, "accentunder": true, "displaystyle": true, "columnalign": true,
	"style": true, "class": true, "linethickness": true, "lspace": true, "rspace": true, "form": true,
}

// wellFormed parses s as XML and checks it uses only the allowed
// elements and attributes, so nothing from the source can become markup.
func wellFormed(s string) error {
	d := xml.NewDecoder(strings.NewReader(s))
	d.Strict = true
	roots := 0
	depth := 0
	var children []int // element children counted per open element
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			return err
		}
		switch tok := tok.(type) {
		case xml.StartElement:
			if depth == 0 {
				roots++
			}
			if depth > 0 {
				children[depth-1]++
			}
			children = append(children, 0)
			depth++
			if !allowedElements[tok.Name.Local] {
				return &xml.SyntaxError{Msg: "element " + tok.Name.Local + " not allowed"}
			}
			for _, a := range tok.Attr {
				if !allowedAttrs[a.Name.Local] || a.Name.Space != "" {
					return &xml.SyntaxError{Msg: "attribute " + a.Name.Local + " not allowed"}
				}
			}
		case xml.EndElement:
			depth--
			if want, ok := arity[tok.Name.Local]; ok && children[depth] != want {
				return &xml.SyntaxError{Msg: fmt.Sprintf("%s has %d children, want %d", tok.Name.Local, children[depth], want)}
			}
			children = children[:depth]
		case xml.CharData:
			if depth == 0 && strings.TrimSpace(string(tok)) != "" {
				return &xml.SyntaxError{Msg: "text outside <math>"}
			}
		case xml.ProcInst, xml.Directive, xml.Comment:
			return &xml.SyntaxError{Msg: "unexpected markup"}
		}
	}
	if roots != 1 {
		return &xml.SyntaxError{Msg: "want exactly one <math> root"}
	}
	return nil
}

func TestEscaping(t *testing.T) {
	hostile := []string{
		`<script>alert(1)</script>`,
		`\text{<script>alert("x")</script>}`,
		`\text{a & b "c" 'd'}`,
		`\operatorname{<img src=x onerror=alert(1)>}`,
		`\href{javascript:alert(1)}{x}`,
		`\mathrm{javascript:alert(1)}`,
		`\begin{<b>}`,
		`\<`,
		"\x00\x01\ufffe",
		"\xff\xfe invalid utf8",
	}
	for _, src := range hostile {
		for _, display := range []bool{false, true} {
			got := MathML(src, display)
			if err := wellFormed(got); err != nil {
				t.Errorf("MathML(%q): %v\n%s", src, err, got)
			}
			low := strings.ToLower(got)
			for _, bad := range []string{"<script", "<img", "<b>", "<a "} {
				if strings.Contains(low, bad) {
					t.Errorf("MathML(%q) contains %q:\n%s", src, bad, got)
				}
			}
		}
	}
	got := MathML(`\text{a & b "c" 'd' <e>}`, false)
	if want := `<mtext>a &amp; b &quot;c&quot; &#39;d&#39; &lt;e&gt;</mtext>`; !strings.Contains(got, want) {
		t.Errorf("text escaping: got %s, want %s", got, want)
	}
	if got := MathML(`\href{javascript:alert(1)}{x}`, false); !strings.Contains(got, `unknown command \href`) {
		t.Errorf(`\href must be an unknown command, got %s`, got)
	}
}

func TestLimits(t *testing.T) {
	long := strings.Repeat("x+", MaxLen/2+1)
	if got := MathML(long, false); !strings.Contains(got, "formula too long: 2002 characters, limit 2000") || strings.Contains(got, "<mi>") {
		t.Errorf("long input: got %.200s", got)
	}
	ok := strings.Repeat("{", 20) + "x" + strings.Repeat("}", 20)
	if got := MathML(ok, false); strings.Contains(got, ErrorClass) {
		t.Errorf("depth 20 must pass: %s", got)
	}
	for _, deep := range []string{
		strings.Repeat("{", 60) + "x" + strings.Repeat("}", 60),
		strings.Repeat(`\frac{`, 60) + "x",
		strings.Repeat(`x^{`, 60),
		strings.Repeat(`\left(`, 60),
		strings.Repeat(`\sqrt[`, 60),
		strings.Repeat(`\begin{aligned}`, 60),
		strings.Repeat(`\not`, 400),
	} {
		got := MathML(deep, false)
		if !strings.Contains(got, "nested deeper than 50 levels") {
			t.Errorf("MathML(%.30q...) lacks the depth error: %.300s", deep, got)
		}
		if err := wellFormed(got); err != nil {
			t.Errorf("MathML(%.30q...): %v", deep, err)
		}
	}
}

func TestVariants(t *testing.T) {
	tests := []struct{ src, want string }{
		{`\mathbf{A}`, "𝐀"}, {`\mathbf{z}`, "𝐳"}, {`\mathbf{1}`, "𝟏"},
		{`\mathcal{A}`, "𝒜"}, {`\mathcal{B}`, "ℬ"}, {`\mathcal{L}`, "ℒ"},
		{`\mathbb{R}`, "ℝ"}, {`\mathbb{N}`, "ℕ"}, {`\mathbb{E}`, "𝔼"},
		{`\boldsymbol{\sigma}`, "𝝈"}, {`\boldsymbol{x}`, "𝒙"},
		{`\mathfrak{g}`, "𝔤"}, {`\mathsf{A}`, "𝖠"}, {`\mathtt{a}`, "𝚊"},
		{`\mathit{h}`, "ℎ"},
	}
	// Code points from the Unicode Standard, Mathematical Alphanumeric
	// Symbols chart (U+1D400–U+1D7FF) and its Letterlike Symbols holes.
	for _, tt := range tests {
		if got := MathML(tt.src, false); !strings.Contains(got, tt.want) {
			t.Errorf("MathML(%q) = %s, want %s", tt.src, got, tt.want)
		}
	}
}

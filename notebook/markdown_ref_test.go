package notebook

import (
	"bytes"
	"strings"
	"testing"

	"github.com/yuin/goldmark"
)

// Our renderer is checked against goldmark (a CommonMark implementation)
// on notes without mathematics, raw HTML, images or unsafe links, where
// the two must agree up to the spelling of escaped quotes.
func TestMarkdownAgreesWithCommonMark(t *testing.T) {
	srcs := []string{
		"plain text",
		"# Title\n\nA paragraph\nover two lines.",
		"## Sub ##\n### three\n#### four #\n##### five\n###### six\n####### seven",
		"Setext one\n===\n\nSetext two\n---",
		"*em* and **strong** and ***both*** and _em_ and __strong__",
		"snake_case_name and 2*3*4 and a * b",
		"**bold *nested em* bold**",
		"*a **b** c*",
		"**a*",
		"*a**",
		"foo*bar*baz",
		"`code` and `` a ` b `` and ` x `",
		"unmatched `tick",
		"line one  \nline two\\\nline three",
		"- one\n- two\n- three",
		"1. one\n2. two\n3. three",
		"3) three\n4) four",
		"- a\n\n- b",
		"- item\n  continued\n- next\n    - nested\n    - nested two\n- last",
		"- a\n  - b\n    - c",
		"1. first\n\n   second paragraph\n2. next",
		"- lazy\ncontinuation",
		"* star\n+ plus\n- dash",
		"> quoted\n> more\n\n> second quote\nlazy",
		"> # heading in quote\n> - list in quote",
		"```\ncode <b> & \"q\"\n```",
		"```go\nfunc main() {}\n```\n\nafter",
		"~~~\ntilde\n~~~",
		"    indented code\n    more\n\nafter",
		"***\n---\n___\n- - -",
		"[link](https://example.org \"title\")",
		"[link](<https://example.org/a%20b>)",
		"[ref link][r] and [r] and [r][]\n\n[r]: https://example.org/r",
		"[outer [inner] text](https://example.org)",
		"<https://example.org/auto>",
		"escapes \\* \\_ \\` \\[ \\] \\\\ \\#",
		"entities &amp; &#65; &#x42; &#0; & and AT&T",
		"quotes \"double\" and 'single' and <less and >greater",
		"para\n# heading interrupts\npara",
		"para\n- list interrupts",
		"para\n2. does not interrupt",
		"a\n\n\n\nb",
		"  indented two spaces\n   three",
		"# ",
		"[not a link] and [also](not closed",
		"**strong** at end of line  \nnext",
		"Über *naïve* café — “quotes”",
		"- [link](https://a.example) in list\n- `code` in list",
		"1. one\n1. one again\n1. and again",
		"> - a\n> - b",
		"- a\n-\n- c",
		"text\n\n    code after text",
		"http://bare.example/url stays text",
		"***strong emph***text",
		"_foo_bar_ and __foo__bar__",
		"*foo*bar",
		"[a](https://x.example/(paren)) and [b](https://x.example/%20)",
		"- a\n\n  ```\n  code\n\n  more\n  ```\n- b",
		"> ```\n> fenced in quote\n> ```",
		"## *emphasis* in `heading`",
		"[t](https://x.example 'single') [u](https://x.example (paren))",
		"[r1]\n\n[r1]: https://x.example/1 \"Title one\"\n[R2]: <https://x.example/2>\n\n[r2]",
		"0. zero start\n1. one",
		"-\tTab item\n\tindented",
		"windows\r\nline endings\r\n\r\nnew para",
		"- loose\n\n  two paragraphs\n- item",
		"1. a\n   - b\n   - c\n2. d",
		"text *open\n\nclosed* text",
		"a\n***\nb",
		"Heading\n= = =",
		"> quote\n\n    code",
		"\\*not em\\*",
		"**foo bar **",
		"__proto__ and *(*foo*)*",
	}
	for _, src := range srcs {
		var want bytes.Buffer
		if err := goldmark.Convert([]byte(src), &want); err != nil {
			t.Fatal(err)
		}
		w := strings.NewReplacer("&quot;", "&#34;", ` rel="noopener noreferrer nofollow"`, "").Replace(want.String())
		got := strings.NewReplacer(` rel="noopener noreferrer nofollow"`, "", "&#39;", "'").Replace(Markdown(src))
		if got != w {
			t.Errorf("%q:\n got %q\nwant %q", src, got, w)
		}
	}
}

// Bad input never panics and never leaves a tag our policy forbids.
func TestMarkdownRandomInputs(t *testing.T) {
	const alphabet = "ab #*_`[]()<>!$\\&;:/-+.1\n\t >\"'=~|"
	state := uint32(12345)
	for n := range 3000 {
		var b strings.Builder
		for range 1 + n%60 {
			state = state*1664525 + 1013904223 // Numerical Recipes LCG
			b.WriteByte(alphabet[state>>24%uint32(len(alphabet))])
		}
		src := b.String()
		inert(t, src, Markdown(src))
	}
}

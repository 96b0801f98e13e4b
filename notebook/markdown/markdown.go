// Package markdown renders the notes of a notebook to safe HTML: CommonMark
// by goldmark, mathematics between $…$ and $$…$$ by texmath, and a policy
// for what a note may contain (docs/format.md, "Notes"):
//
//   - Raw HTML is never rendered (goldmark without its unsafe option
//     writes "<!-- raw HTML omitted -->").
//   - Links are kept only to http:// and https:// addresses and to anchors
//     in the page, with rel="noopener noreferrer nofollow" on addresses;
//     any other link is replaced by its text.
//   - Images are never loaded: an image becomes its alternative text in a
//     <span class="image-omitted">.
package markdown

import (
	"bytes"
	"html"
	"strings"

	"github.com/yuin/goldmark"
	"github.com/yuin/goldmark/ast"
	"github.com/yuin/goldmark/parser"
	"github.com/yuin/goldmark/renderer"
	"github.com/yuin/goldmark/text"
	"github.com/yuin/goldmark/util"

	"gapbook/notebook/texmath"
)

var md = goldmark.New(
	goldmark.WithParserOptions(
		parser.WithBlockParsers(util.Prioritized(mathBlockParser{}, 50)),
		parser.WithInlineParsers(util.Prioritized(mathInlineParser{}, 50)),
	),
	goldmark.WithRendererOptions(
		renderer.WithNodeRenderers(util.Prioritized(policy{}, 50)),
	),
)

// Render renders a note to a safe HTML fragment.
func Render(src string) string {
	var b bytes.Buffer
	if err := md.Convert([]byte(src), &b); err != nil {
		return "<p>" + html.EscapeString(src) + "</p>"
	}
	return b.String()
}

// SafeLink reports whether a link destination is allowed in a note:
// http(s) addresses and in-page anchors only.
func SafeLink(dest string) bool {
	if strings.HasPrefix(dest, "#") {
		return !strings.ContainsAny(dest, " \t\r\n\x00")
	}
	// Reject control characters and spaces, which browsers strip to find
	// the scheme ("java\tscript:").
	for _, r := range dest {
		if r < 0x21 || r == 0x7f {
			return false
		}
	}
	l := strings.ToLower(dest)
	return strings.HasPrefix(l, "https://") || strings.HasPrefix(l, "http://")
}

func mathHTML(src string, display bool) string {
	return texmath.MathML(src, display)
}

// Math nodes.
var (
	kindMathBlock  = ast.NewNodeKind("MathBlock")
	kindMathInline = ast.NewNodeKind("MathInline")
)

type mathBlock struct {
	ast.BaseBlock
	src    strings.Builder
	closed bool // $$…$$ on its opening line
}

func (*mathBlock) Kind() ast.NodeKind { return kindMathBlock }
func (n *mathBlock) Dump(src []byte, level int) {
	ast.DumpHelper(n, src, level, nil, nil)
}

type mathInline struct {
	ast.BaseInline
	src     string
	display bool
}

func (*mathInline) Kind() ast.NodeKind { return kindMathInline }
func (n *mathInline) Dump(src []byte, level int) {
	ast.DumpHelper(n, src, level, nil, nil)
}

// mathBlockParser reads display mathematics: a line starting with $$,
// either $$…$$ on that line or up to a line ending in $$. It may interrupt
// a paragraph.
type mathBlockParser struct{}

func (mathBlockParser) Trigger() []byte { return []byte{'$'} }

func (mathBlockParser) Open(parent ast.Node, reader text.Reader, pc parser.Context) (ast.Node, parser.State) {
	line, _ := reader.PeekLine()
	pos := pc.BlockOffset()
	if pos < 0 {
		return nil, parser.NoChildren
	}
	t := strings.TrimRight(string(line[pos:]), " \t\r\n")
	if !strings.HasPrefix(t, "$$") {
		return nil, parser.NoChildren
	}
	body := strings.TrimSpace(t[2:])
	n := &mathBlock{}
	if len(body) >= 2 && strings.HasSuffix(body, "$$") {
		inner := strings.TrimSuffix(body, "$$")
		if strings.Contains(inner, "$$") {
			return nil, parser.NoChildren
		}
		n.src.WriteString(strings.TrimSpace(inner))
		n.closed = true
		reader.AdvanceToEOL()
		return n, parser.NoChildren
	}
	if body != "" {
		return nil, parser.NoChildren
	}
	reader.AdvanceToEOL()
	return n, parser.NoChildren
}

func (mathBlockParser) Continue(node ast.Node, reader text.Reader, pc parser.Context) parser.State {
	n := node.(*mathBlock)
	line, _ := reader.PeekLine()
	if line == nil || n.closed {
		return parser.Close
	}
	u := strings.TrimRight(string(line), " \t\r\n")
	reader.AdvanceToEOL()
	if strings.HasSuffix(u, "$$") {
		n.src.WriteString(strings.TrimSuffix(u, "$$"))
		return parser.Close
	}
	n.src.WriteString(u)
	n.src.WriteByte('\n')
	return parser.Continue | parser.NoChildren
}

func (mathBlockParser) Close(ast.Node, text.Reader, parser.Context) {}
func (mathBlockParser) CanInterruptParagraph() bool                 { return true }
func (mathBlockParser) CanAcceptIndentedLine() bool                 { return false }

// mathInlineParser reads $…$ (inline) and $$…$$ (display, inside a
// paragraph) on one line: the opening $ is not followed by a space, the
// closing $ is not preceded by a space nor followed by a digit, so that
// "$5 and $10" stays text.
type mathInlineParser struct{}

func (mathInlineParser) Trigger() []byte { return []byte{'$'} }

func (mathInlineParser) Parse(parent ast.Node, block text.Reader, pc parser.Context) ast.Node {
	line, _ := block.PeekLine()
	s := string(line)
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		s = s[:i]
	}
	display := len(s) > 1 && s[1] == '$'
	open := 1
	if display {
		open = 2
	}
	rest := s[open:]
	if len(rest) == 0 || rest[0] == ' ' {
		return nil
	}
	for i := 0; i < len(rest); i++ {
		switch rest[i] {
		case '\\':
			i++
		case '$':
			if display {
				if i+1 < len(rest) && rest[i+1] == '$' && i > 0 {
					block.Advance(open + i + 2)
					return &mathInline{src: rest[:i], display: true}
				}
				continue
			}
			if i == 0 || rest[i-1] == ' ' || i+1 < len(rest) && rest[i+1] >= '0' && rest[i+1] <= '9' {
				continue
			}
			block.Advance(open + i + 1)
			return &mathInline{src: rest[:i]}
		}
	}
	return nil
}

// policy renders mathematics, links, autolinks and images.
type policy struct{}

func (policy) RegisterFuncs(r renderer.NodeRendererFuncRegisterer) {
	r.Register(kindMathBlock, func(w util.BufWriter, src []byte, n ast.Node, entering bool) (ast.WalkStatus, error) {
		if entering {
			w.WriteString(`<div class="math-display">`)
			w.WriteString(mathHTML(strings.TrimSpace(n.(*mathBlock).src.String()), true))
			w.WriteString("</div>\n")
		}
		return ast.WalkSkipChildren, nil
	})
	r.Register(kindMathInline, func(w util.BufWriter, src []byte, n ast.Node, entering bool) (ast.WalkStatus, error) {
		if entering {
			m := n.(*mathInline)
			w.WriteString(mathHTML(m.src, m.display))
		}
		return ast.WalkSkipChildren, nil
	})
	r.Register(ast.KindLink, func(w util.BufWriter, src []byte, node ast.Node, entering bool) (ast.WalkStatus, error) {
		n := node.(*ast.Link)
		dest := string(n.Destination)
		if !SafeLink(dest) {
			return ast.WalkContinue, nil
		}
		if entering {
			w.WriteString(`<a href="`)
			w.Write(util.EscapeHTML(util.URLEscape(n.Destination, true)))
			w.WriteByte('"')
			if n.Title != nil {
				w.WriteString(` title="`)
				w.Write(util.EscapeHTML(n.Title))
				w.WriteByte('"')
			}
			if !strings.HasPrefix(dest, "#") {
				w.WriteString(` rel="noopener noreferrer nofollow"`)
			}
			w.WriteByte('>')
		} else {
			w.WriteString("</a>")
		}
		return ast.WalkContinue, nil
	})
	r.Register(ast.KindAutoLink, func(w util.BufWriter, src []byte, node ast.Node, entering bool) (ast.WalkStatus, error) {
		if !entering {
			return ast.WalkContinue, nil
		}
		n := node.(*ast.AutoLink)
		url, label := n.URL(src), n.Label(src)
		if n.AutoLinkType != ast.AutoLinkURL || !SafeLink(string(url)) {
			w.Write(util.EscapeHTML(label))
			return ast.WalkContinue, nil
		}
		w.WriteString(`<a href="`)
		w.Write(util.EscapeHTML(util.URLEscape(url, false)))
		w.WriteString(`" rel="noopener noreferrer nofollow">`)
		w.Write(util.EscapeHTML(label))
		w.WriteString("</a>")
		return ast.WalkContinue, nil
	})
	r.Register(ast.KindImage, func(w util.BufWriter, src []byte, node ast.Node, entering bool) (ast.WalkStatus, error) {
		if entering {
			w.WriteString(`<span class="image-omitted">[image: `)
			w.Write(util.EscapeHTML(altText(node, src)))
			w.WriteString("]</span>")
		}
		return ast.WalkSkipChildren, nil
	})
}

func altText(n ast.Node, src []byte) []byte {
	var b bytes.Buffer
	for c := n.FirstChild(); c != nil; c = c.NextSibling() {
		if t, ok := c.(*ast.Text); ok {
			b.Write(t.Segment.Value(src))
		} else {
			b.Write(altText(c, src))
		}
	}
	return b.Bytes()
}

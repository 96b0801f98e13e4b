package notebook

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
)

// Markdown policy for notes (what a note may contain):
//
//   - Raw HTML is never rendered (goldmark's default: it is omitted).
//   - Links are kept only when they point to http:// or https:// addresses
//     or to an anchor in the page ("#results"); they open with
//     rel="noopener noreferrer nofollow". Any other link (javascript:,
//     data:, vbscript:, file:, mailto:, relative paths, scheme-like text
//     hidden by spaces or control characters) is replaced by its text.
//   - Images are never loaded, from anywhere: a notebook must work offline
//     and must not tell a remote server that it was opened. An image is
//     replaced by its alternative text in a <span class="image-omitted">.
//   - Mathematics between $…$ (inline) and $$…$$ (display) goes through
//     texmath when it is available, and is otherwise shown as escaped
//     source in <code class="math">.
var md = goldmark.New(
	goldmark.WithParserOptions(parser.WithASTTransformers(util.Prioritized(linkPolicy{}, 100))),
	goldmark.WithExtensions(mathExtension{}),
)

// Markdown renders a note to a safe HTML fragment.
func Markdown(src string) string {
	var b bytes.Buffer
	if err := md.Convert([]byte(src), &b); err != nil {
		return "<pre class=\"note-error\">" + html.EscapeString(src) + "</pre>"
	}
	return b.String()
}

// SafeLink reports whether a link destination is allowed in a note:
// http(s) addresses and in-page anchors only.
func SafeLink(dest string) bool {
	if strings.HasPrefix(dest, "#") {
		return !strings.ContainsAny(dest, " \t\r\n\x00")
	}
	// Reject anything with control characters or spaces before the colon,
	// which browsers strip to find the scheme ("java\tscript:").
	for _, r := range dest {
		if r < 0x21 || r == 0x7f {
			return false
		}
	}
	l := strings.ToLower(dest)
	return strings.HasPrefix(l, "https://") || strings.HasPrefix(l, "http://")
}

type linkPolicy struct{}

func (linkPolicy) Transform(doc *ast.Document, reader text.Reader, pc parser.Context) {
	src := reader.Source()
	var unsafe []ast.Node
	_ = ast.Walk(doc, func(n ast.Node, entering bool) (ast.WalkStatus, error) {
		if !entering {
			return ast.WalkContinue, nil
		}
		switch x := n.(type) {
		case *ast.Link:
			if SafeLink(string(x.Destination)) {
				if !strings.HasPrefix(string(x.Destination), "#") {
					x.SetAttributeString("rel", []byte("noopener noreferrer nofollow"))
				}
			} else {
				unsafe = append(unsafe, n)
			}
		case *ast.AutoLink:
			if x.AutoLinkType != ast.AutoLinkURL || !SafeLink(string(x.URL(src))) {
				unsafe = append(unsafe, n)
			} else {
				x.SetAttributeString("rel", []byte("noopener noreferrer nofollow"))
			}
		case *ast.Image:
			unsafe = append(unsafe, n)
		}
		return ast.WalkContinue, nil
	})
	for _, n := range unsafe {
		parent := n.Parent()
		if parent == nil {
			continue
		}
		switch x := n.(type) {
		case *ast.AutoLink:
			parent.ReplaceChild(parent, n, ast.NewString(x.Label(src)))
		case *ast.Image:
			span := &omittedImage{alt: string(nodeText(x, src))}
			parent.ReplaceChild(parent, n, span)
		default:
			// Keep the link text, drop the link.
			for c := n.FirstChild(); c != nil; {
				next := c.NextSibling()
				parent.InsertBefore(parent, n, c)
				c = next
			}
			parent.RemoveChild(parent, n)
		}
	}
}

func nodeText(n ast.Node, src []byte) []byte {
	var b bytes.Buffer
	_ = ast.Walk(n, func(c ast.Node, entering bool) (ast.WalkStatus, error) {
		if entering {
			switch t := c.(type) {
			case *ast.Text:
				b.Write(t.Segment.Value(src))
			case *ast.String:
				b.Write(t.Value)
			}
		}
		return ast.WalkContinue, nil
	})
	return b.Bytes()
}

var kindOmittedImage = ast.NewNodeKind("OmittedImage")

type omittedImage struct {
	ast.BaseInline
	alt string
}

func (n *omittedImage) Kind() ast.NodeKind         { return kindOmittedImage }
func (n *omittedImage) Dump(src []byte, level int) { ast.DumpHelper(n, src, level, nil, nil) }

// Math nodes.
var kindMath = ast.NewNodeKind("Math")

type mathNode struct {
	ast.BaseInline
	src     string
	display bool
}

func (n *mathNode) Kind() ast.NodeKind { return kindMath }
func (n *mathNode) Dump(src []byte, level int) {
	ast.DumpHelper(n, src, level, map[string]string{"src": n.src}, nil)
}

var kindMathBlock = ast.NewNodeKind("MathBlock")

type mathBlock struct {
	ast.BaseBlock
	closed bool // the closing $$ has been read
}

func (n *mathBlock) Kind() ast.NodeKind         { return kindMathBlock }
func (n *mathBlock) Dump(src []byte, level int) { ast.DumpHelper(n, src, level, nil, nil) }
func (n *mathBlock) IsRaw() bool                { return true }

type mathExtension struct{}

func (mathExtension) Extend(m goldmark.Markdown) {
	m.Parser().AddOptions(
		parser.WithInlineParsers(util.Prioritized(mathInline{}, 150)),
		parser.WithBlockParsers(util.Prioritized(mathBlockParser{}, 150)),
	)
	m.Renderer().AddOptions(renderer.WithNodeRenderers(util.Prioritized(mathRenderer{}, 150)))
}

// mathInline parses $…$ and $$…$$ within one line. An opening $ must be
// followed, and a closing $ preceded, by a non-space, and a closing $ must
// not be followed by a digit, so that prices such as $5 and $10 stay text.
type mathInline struct{}

func (mathInline) Trigger() []byte { return []byte{'$'} }

func (mathInline) Parse(parent ast.Node, block text.Reader, pc parser.Context) ast.Node {
	line, _ := block.PeekLine()
	display := len(line) > 1 && line[1] == '$'
	open := 1
	if display {
		open = 2
	}
	rest := line[open:]
	if len(rest) == 0 || rest[0] == ' ' || rest[0] == '\n' {
		return nil
	}
	for i := 0; i < len(rest); i++ {
		switch rest[i] {
		case '\\':
			i++
			continue
		case '\n':
			return nil
		case '$':
			if display {
				if i+1 < len(rest) && rest[i+1] == '$' && i > 0 {
					block.Advance(open + i + 2)
					return &mathNode{src: string(rest[:i]), display: true}
				}
				continue
			}
			if i == 0 || rest[i-1] == ' ' || i+1 < len(rest) && rest[i+1] >= '0' && rest[i+1] <= '9' {
				continue
			}
			block.Advance(open + i + 1)
			return &mathNode{src: string(rest[:i])}
		}
	}
	return nil
}

// mathBlockParser reads display mathematics on lines of its own:
// a line starting with $$ opens, and a line ending with $$ closes.
type mathBlockParser struct{}

func (mathBlockParser) Trigger() []byte { return []byte{'$'} }

func (mathBlockParser) Open(parent ast.Node, reader text.Reader, pc parser.Context) (ast.Node, parser.State) {
	line, seg := reader.PeekLine()
	pos := pc.BlockOffset()
	if pos < 0 || !bytes.HasPrefix(line[pos:], []byte("$$")) {
		return nil, parser.NoChildren
	}
	body := bytes.TrimSpace(line[pos+2:])
	n := &mathBlock{}
	if len(body) >= 2 && bytes.HasSuffix(body, []byte("$$")) {
		// One line: $$ … $$ followed by nothing else.
		start := seg.Start + pos + 2
		inner := bytes.TrimSuffix(body, []byte("$$"))
		if bytes.Contains(inner, []byte("$$")) {
			return nil, parser.NoChildren
		}
		n.Lines().Append(text.NewSegment(start, start+len(bytes.TrimRight(line[pos+2:], " \t\r\n"))-2))
		reader.AdvanceToEOL()
		n.closed = true
		return n, parser.Close
	}
	if len(body) != 0 {
		return nil, parser.NoChildren
	}
	reader.AdvanceToEOL()
	return n, parser.NoChildren
}

func (mathBlockParser) Continue(node ast.Node, reader text.Reader, pc parser.Context) parser.State {
	if node.(*mathBlock).closed {
		return parser.Close
	}
	line, seg := reader.PeekLine()
	t := bytes.TrimRight(line, " \t\r\n")
	if bytes.HasSuffix(t, []byte("$$")) {
		node.Lines().Append(text.NewSegment(seg.Start, seg.Start+len(t)-2))
		reader.AdvanceToEOL()
		return parser.Close
	}
	node.Lines().Append(seg)
	reader.AdvanceToEOL()
	return parser.Continue | parser.NoChildren
}

func (mathBlockParser) Close(node ast.Node, reader text.Reader, pc parser.Context) {}
func (mathBlockParser) CanInterruptParagraph() bool                                { return true }
func (mathBlockParser) CanAcceptIndentedLine() bool                                { return false }

type mathRenderer struct{}

func (mathRenderer) RegisterFuncs(r renderer.NodeRendererFuncRegisterer) {
	r.Register(kindMath, func(w util.BufWriter, src []byte, n ast.Node, entering bool) (ast.WalkStatus, error) {
		if entering {
			m := n.(*mathNode)
			_, _ = w.WriteString(mathHTML(m.src, m.display))
		}
		return ast.WalkSkipChildren, nil
	})
	r.Register(kindMathBlock, func(w util.BufWriter, src []byte, n ast.Node, entering bool) (ast.WalkStatus, error) {
		if entering {
			var b strings.Builder
			lines := n.Lines()
			for i := 0; i < lines.Len(); i++ {
				s := lines.At(i)
				b.Write(s.Value(src))
			}
			_, _ = w.WriteString("<div class=\"math-display\">" + mathHTML(strings.TrimSpace(b.String()), true) + "</div>\n")
		}
		return ast.WalkSkipChildren, nil
	})
	r.Register(kindOmittedImage, func(w util.BufWriter, src []byte, n ast.Node, entering bool) (ast.WalkStatus, error) {
		if entering {
			_, _ = w.WriteString(`<span class="image-omitted">[image: ` + html.EscapeString(n.(*omittedImage).alt) + `]</span>`)
		}
		return ast.WalkSkipChildren, nil
	})
}

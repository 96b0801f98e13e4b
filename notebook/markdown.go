package notebook

import (
	"html"
	"strconv"
	"strings"
)

// Markdown policy for notes (what a note may contain):
//
//   - Raw HTML is never rendered: a block or tag of it becomes the comment
//     "<!-- raw HTML omitted -->".
//   - Links are kept only when they point to http:// or https:// addresses
//     or to an anchor in the page ("#results"); they open with
//     rel="noopener noreferrer nofollow". Any other link (javascript:,
//     data:, vbscript:, file:, mailto:, relative paths, scheme-like text
//     hidden by spaces or control characters) is replaced by its text.
//   - Images are never loaded, from anywhere: a notebook must work offline
//     and must not tell a remote server that it was opened. An image is
//     replaced by its alternative text in a <span class="image-omitted">.
//   - Mathematics between $…$ (inline) and $$…$$ (display) goes through
//     texmath.
//
// The renderer is our own and follows the block and inline structure of
// CommonMark 0.31 (https://spec.commonmark.org/0.31.2/) for what notes
// use: ATX and setext headings, paragraphs, emphasis and strong emphasis,
// code spans, fenced and indented code, block quotes, bullet and ordered
// lists (tight and loose, nested), thematic breaks, hard line breaks,
// backslash escapes, entity references, inline links, reference links and
// autolinks. It replaces a general Markdown library whose parser, regular
// expressions, Unicode and HTML entity tables were about a fifth of the
// page's WebAssembly. Simplified against the specification: a list item
// continues lazily only with paragraph text, link labels match after case
// folding of ASCII only, and named entity references are passed to the
// browser undecoded (text) or escaped (link destinations and titles).

// Markdown renders a note to a safe HTML fragment.
func Markdown(src string) string {
	src = strings.ReplaceAll(strings.ReplaceAll(src, "\r\n", "\n"), "\r", "\n")
	src = strings.ReplaceAll(src, "\x00", "\uFFFD")
	lines := strings.Split(strings.TrimSuffix(src, "\n"), "\n")
	for i, l := range lines {
		lines[i] = expandTabs(l)
	}
	m := &mdDoc{refs: map[string]mdRef{}}
	blocks := m.parse(lines)
	var b strings.Builder
	m.render(&b, blocks, false)
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

type mdKind int

const (
	mdPara mdKind = iota
	mdHeading
	mdCode
	mdMath
	mdRule
	mdQuote
	mdList
	mdRaw
)

type mdBlock struct {
	kind     mdKind
	level    int    // heading level
	text     string // paragraph and heading source, code and math text
	info     string // fenced code info string
	children []*mdBlock
	items    [][]*mdBlock // list items
	ordered  bool
	start    int
	loose    bool
}

type mdRef struct{ dest, title string }

type mdDoc struct {
	refs map[string]mdRef
}

func expandTabs(s string) string {
	if !strings.Contains(s, "\t") {
		return s
	}
	var b strings.Builder
	col := 0
	for _, r := range s {
		if r == '\t' {
			n := 4 - col%4
			b.WriteString("    "[:n])
			col += n
			continue
		}
		b.WriteRune(r)
		col++
	}
	return b.String()
}

func indentOf(s string) int {
	n := 0
	for n < len(s) && s[n] == ' ' {
		n++
	}
	return n
}

func isBlank(s string) bool { return strings.TrimLeft(s, " ") == "" }

// dropIndent removes up to n leading spaces.
func dropIndent(s string, n int) string {
	i := 0
	for i < n && i < len(s) && s[i] == ' ' {
		i++
	}
	return s[i:]
}

func fenceOf(t string) (ch byte, n int) {
	if t == "" || t[0] != '`' && t[0] != '~' {
		return 0, 0
	}
	for n < len(t) && t[n] == t[0] {
		n++
	}
	if n < 3 || t[0] == '`' && strings.Contains(t[n:], "`") {
		return 0, 0
	}
	return t[0], n
}

func isRule(t string) bool {
	if t == "" || !strings.ContainsRune("-*_", rune(t[0])) {
		return false
	}
	n := 0
	for i := 0; i < len(t); i++ {
		switch t[i] {
		case t[0]:
			n++
		case ' ':
		default:
			return false
		}
	}
	return n >= 3
}

func atxLevel(t string) int {
	n := 0
	for n < len(t) && t[n] == '#' {
		n++
	}
	if n == 0 || n > 6 || n < len(t) && t[n] != ' ' {
		return 0
	}
	return n
}

// listMarker reads a list marker at the start of t: the marker character
// ('-', '+', '*', or the delimiter '.' or ')' of an ordered item), the
// number, and the width of marker and following spaces (the content
// column), or w = 0 when t does not start an item.
func listMarker(t string) (ch byte, num, w int) {
	i := 0
	if t != "" && strings.ContainsRune("-+*", rune(t[0])) {
		ch, i = t[0], 1
	} else {
		for i < len(t) && i < 9 && t[i] >= '0' && t[i] <= '9' {
			i++
		}
		if i == 0 || i >= len(t) || t[i] != '.' && t[i] != ')' {
			return 0, 0, 0
		}
		num, _ = strconv.Atoi(t[:i])
		ch = t[i]
		i++
	}
	if i < len(t) && t[i] != ' ' {
		return 0, 0, 0
	}
	sp := indentOf(t[i:])
	if sp == 0 || sp > 4 || i+sp == len(t) {
		sp = 1 // empty first line, or indented code after the marker
	}
	return ch, num, i + sp
}

// blockTags are the HTML elements that open a raw HTML block even inside
// a paragraph (CommonMark 0.31, section 4.6, condition 6).
var blockTags = strings.Fields(`address article aside base basefont blockquote body caption center col
colgroup dd details dialog dir div dl dt fieldset figcaption figure footer form frame frameset h1 h2
h3 h4 h5 h6 head header hr html iframe legend li link main menu menuitem nav noframes ol optgroup
option p param search section summary table tbody td tfoot th thead title tr track ul`)

// htmlStart reports whether t opens a raw HTML block, which line ends it
// ("" for the next blank line), and whether it may interrupt a paragraph.
func htmlStart(t string) (ok bool, end string, interrupt bool) {
	if len(t) < 2 || t[0] != '<' {
		return false, "", false
	}
	low := strings.ToLower(t)
	switch {
	case strings.HasPrefix(low, "<!--"):
		return true, "-->", true
	case strings.HasPrefix(low, "<?"):
		return true, "?>", true
	case strings.HasPrefix(low, "<![cdata["):
		return true, "]]>", true
	case strings.HasPrefix(low, "<!") && len(low) > 2 && low[2] >= 'a' && low[2] <= 'z':
		return true, ">", true
	}
	name := func(from int) (string, string) {
		j := from
		for j < len(low) && (low[j] >= 'a' && low[j] <= 'z' || j > from && (low[j] >= '0' && low[j] <= '9' || low[j] == '-')) {
			j++
		}
		return low[from:j], low[j:]
	}
	tag, after := name(1)
	for _, raw := range []string{"script", "pre", "style", "textarea"} {
		if tag == raw && (after == "" || after[0] == ' ' || after[0] == '>') {
			return true, "</" + tag + ">", true
		}
	}
	if tag == "" && low[1] == '/' {
		tag, after = name(2)
	}
	if tag == "" {
		return false, "", false
	}
	for _, b := range blockTags {
		if tag == b && (after == "" || after[0] == ' ' || after[0] == '>' || strings.HasPrefix(after, "/>")) {
			return true, "", true
		}
	}
	// Any other complete tag alone on its line.
	if e := tagEnd(t); e > 0 && strings.TrimRight(t[e:], " ") == "" {
		return true, "", false
	}
	return false, "", false
}

// interrupts reports whether line t (indent removed) starts a block that
// ends a paragraph.
func interrupts(t string) bool {
	if atxLevel(t) > 0 || isRule(t) || strings.HasPrefix(t, ">") {
		return true
	}
	if strings.HasPrefix(t, "$$") {
		if b, _ := mathBlockAt([]string{t}, 0, t); b != nil {
			return true
		}
	}
	if ch, _ := fenceOf(t); ch != 0 {
		return true
	}
	if ok, _, in := htmlStart(t); ok && in {
		return true
	}
	ch, num, w := listMarker(t)
	return w > 0 && w < len(t) && !isBlank(t[w:]) && (ch == '-' || ch == '+' || ch == '*' || num == 1)
}

func (m *mdDoc) parse(lines []string) []*mdBlock {
	var out []*mdBlock
	for i := 0; i < len(lines); {
		line := lines[i]
		if isBlank(line) {
			i++
			continue
		}
		ind := indentOf(line)
		if ind >= 4 {
			j := i
			var code []string
			for j < len(lines) && (isBlank(lines[j]) || indentOf(lines[j]) >= 4) {
				code = append(code, dropIndent(lines[j], 4))
				j++
			}
			for len(code) > 0 && isBlank(code[len(code)-1]) {
				code = code[:len(code)-1]
				j--
			}
			out = append(out, &mdBlock{kind: mdCode, text: strings.Join(code, "\n") + "\n"})
			i = j
			continue
		}
		t := line[ind:]
		if ch, n := fenceOf(t); ch != 0 {
			b := &mdBlock{kind: mdCode, info: strings.TrimSpace(t[n:])}
			var code []string
			j := i + 1
			for ; j < len(lines); j++ {
				u := lines[j]
				if c, k := fenceOf(strings.TrimLeft(u, " ")); c == ch && k >= n && indentOf(u) < 4 && isBlank(strings.TrimLeft(u, " ")[k:]) {
					j++
					break
				}
				code = append(code, dropIndent(u, ind))
			}
			if len(code) > 0 {
				b.text = strings.Join(code, "\n") + "\n"
			}
			out = append(out, b)
			i = j
			continue
		}
		if strings.HasPrefix(t, "$$") {
			if b, next := mathBlockAt(lines, i, t); b != nil {
				out = append(out, b)
				i = next
				continue
			}
		}
		if lv := atxLevel(t); lv > 0 {
			h := strings.TrimSpace(t[lv:])
			if s := strings.TrimRight(h, "#"); s == "" || strings.HasSuffix(s, " ") {
				h = strings.TrimSpace(s)
			}
			out = append(out, &mdBlock{kind: mdHeading, level: lv, text: h})
			i++
			continue
		}
		if isRule(t) {
			out = append(out, &mdBlock{kind: mdRule})
			i++
			continue
		}
		if strings.HasPrefix(t, ">") {
			var inner []string
			j := i
			for j < len(lines) {
				u := lines[j]
				v := strings.TrimLeft(u, " ")
				if indentOf(u) < 4 && strings.HasPrefix(v, ">") {
					v = v[1:]
					if strings.HasPrefix(v, " ") {
						v = v[1:]
					}
					inner = append(inner, v)
					j++
					continue
				}
				// A lazy line continues a paragraph inside the quote.
				if isBlank(u) || len(inner) == 0 || isBlank(inner[len(inner)-1]) || interrupts(v) {
					break
				}
				inner = append(inner, u)
				j++
			}
			out = append(out, &mdBlock{kind: mdQuote, children: m.parse(inner)})
			i = j
			continue
		}
		if ok, end, _ := htmlStart(t); ok {
			j := i
			for j < len(lines) {
				u := lines[j]
				j++
				if end == "" && j < len(lines) && isBlank(lines[j]) || end != "" && strings.Contains(strings.ToLower(u), end) {
					break
				}
			}
			out = append(out, &mdBlock{kind: mdRaw})
			i = j
			continue
		}
		if _, _, w := listMarker(t); w > 0 {
			b, next := m.list(lines, i)
			out = append(out, b)
			i = next
			continue
		}
		// A paragraph, possibly underlined into a setext heading.
		para := []string{strings.TrimLeft(line, " ")}
		j := i + 1
		level := 0
		for ; j < len(lines); j++ {
			u := lines[j]
			if isBlank(u) {
				break
			}
			v := strings.TrimLeft(u, " ")
			if indentOf(u) < 4 {
				if s := strings.TrimRight(v, " "); s != "" && strings.Trim(s, "=") == "" {
					level = 1
				} else if s != "" && strings.Trim(s, "-") == "" {
					level = 2
				}
				if level > 0 {
					j++
					break
				}
				if interrupts(v) {
					break
				}
			}
			para = append(para, strings.TrimLeft(u, " "))
		}
		text := strings.TrimRight(m.takeRefs(strings.Join(para, "\n")), " ")
		switch {
		case level > 0 && text != "":
			out = append(out, &mdBlock{kind: mdHeading, level: level, text: text})
		case text != "":
			out = append(out, &mdBlock{kind: mdPara, text: text})
		case level == 2:
			out = append(out, &mdBlock{kind: mdRule})
		}
		i = j
	}
	return out
}

// mathBlockAt reads display mathematics on lines of its own: a line
// starting with $$ opens, and a line ending with $$ closes; $$ … $$ on one
// line with nothing after it is a block too. Anything else is text.
func mathBlockAt(lines []string, i int, t string) (*mdBlock, int) {
	body := strings.TrimSpace(t[2:])
	if len(body) >= 2 && strings.HasSuffix(body, "$$") {
		inner := strings.TrimSuffix(body, "$$")
		if strings.Contains(inner, "$$") {
			return nil, i
		}
		return &mdBlock{kind: mdMath, text: strings.TrimSpace(inner)}, i + 1
	}
	if body != "" {
		return nil, i
	}
	var b strings.Builder
	j := i + 1
	for ; j < len(lines); j++ {
		u := strings.TrimRight(lines[j], " ")
		if strings.HasSuffix(u, "$$") {
			b.WriteString(strings.TrimSuffix(u, "$$"))
			j++
			break
		}
		b.WriteString(lines[j])
		b.WriteByte('\n')
	}
	return &mdBlock{kind: mdMath, text: strings.TrimSpace(b.String())}, j
}

// list reads the items of one list starting at line i.
func (m *mdDoc) list(lines []string, i int) (*mdBlock, int) {
	first := lines[i]
	ch0, num0, _ := listMarker(first[indentOf(first):])
	b := &mdBlock{kind: mdList, ordered: ch0 == '.' || ch0 == ')', start: num0}
	blankBetween := false
	for i < len(lines) {
		line := lines[i]
		ind := indentOf(line)
		if ind >= 4 {
			break
		}
		ch, _, w := listMarker(line[ind:])
		if w == 0 || ch != ch0 || isRule(line[ind:]) && !b.ordered {
			break
		}
		if blankBetween {
			b.loose = true
		}
		col := ind + w
		item := []string{""}
		if col < len(line) {
			item[0] = line[col:]
		}
		j := i + 1
		for j < len(lines) {
			u := lines[j]
			if isBlank(u) {
				item = append(item, "")
				j++
				continue
			}
			if indentOf(u) >= col {
				item = append(item, u[col:])
				j++
				continue
			}
			// A lazy line continues the item's last paragraph.
			v := strings.TrimLeft(u, " ")
			last := item[len(item)-1]
			if isBlank(last) || interrupts(v) || len(item) == 1 && last == "" {
				break
			}
			if _, _, w := listMarker(v); w > 0 {
				break
			}
			item = append(item, v)
			j++
		}
		// Blank lines at the end belong between items, not to this one.
		k := len(item)
		for k > 1 && isBlank(item[k-1]) {
			k--
		}
		blankBetween = k < len(item)
		item = item[:k]
		for n := 1; n < len(item); n++ {
			if isBlank(item[n]) && n+1 < len(item) {
				// A blank line between two blocks of one item (not inside a
				// fenced code block) makes the list loose.
				if !inFence(item[:n]) {
					b.loose = true
				}
			}
		}
		b.items = append(b.items, m.parse(item))
		i = j
	}
	return b, i
}

// inFence reports whether lines end inside an open fenced code block.
func inFence(lines []string) bool {
	var ch byte
	n := 0
	for _, l := range lines {
		c, k := fenceOf(strings.TrimLeft(l, " "))
		switch {
		case ch == 0 && c != 0:
			ch, n = c, k
		case ch != 0 && c == ch && k >= n:
			ch = 0
		}
	}
	return ch != 0
}

// takeRefs removes link reference definitions from the start of a
// paragraph, remembering the first definition of each label.
func (m *mdDoc) takeRefs(text string) string {
	for strings.HasPrefix(text, "[") {
		end := labelEnd(text, 0)
		if end < 0 || end+1 >= len(text) || text[end+1] != ':' {
			return text
		}
		label := normLabel(text[1:end])
		dest, title, n, ok := destTitle(text, end+2, true)
		if !ok || label == "" {
			return text
		}
		rest := text[n:]
		if i := strings.IndexByte(rest, '\n'); strings.TrimSpace(rest[:max(i, 0)]) != "" || i < 0 && strings.TrimSpace(rest) != "" {
			return text
		}
		if _, seen := m.refs[label]; !seen {
			m.refs[label] = mdRef{dest, title}
		}
		if i := strings.IndexByte(rest, '\n'); i >= 0 {
			text = rest[i+1:]
		} else {
			text = ""
		}
	}
	return text
}

func normLabel(s string) string { return strings.ToLower(strings.Join(strings.Fields(s), " ")) }

// labelEnd returns the index of the ']' closing the '[' at i, or -1.
func labelEnd(s string, i int) int {
	depth := 0
	for j := i; j < len(s); j++ {
		switch s[j] {
		case '\\':
			j++
		case '`':
			k := j
			for k < len(s) && s[k] == '`' {
				k++
			}
			if e := strings.Index(s[k:], s[j:k]); e >= 0 {
				j = k + e + (k - j) - 1
			}
		case '[':
			depth++
		case ']':
			depth--
			if depth == 0 {
				return j
			}
		}
	}
	return -1
}

// destTitle reads a link destination and optional title starting at i
// (spaces and up to one line ending allowed around them); it returns the
// index after them.
func destTitle(s string, i int, ref bool) (dest, title string, end int, ok bool) {
	skip := func() {
		nl := 0
		for i < len(s) && (s[i] == ' ' || s[i] == '\n' && nl == 0) {
			if s[i] == '\n' {
				nl++
			}
			i++
		}
	}
	skip()
	if i < len(s) && s[i] == '<' {
		j := i + 1
		for j < len(s) && s[j] != '>' && s[j] != '\n' && s[j] != '<' {
			if s[j] == '\\' {
				j++
			}
			j++
		}
		if j >= len(s) || s[j] != '>' {
			return "", "", 0, false
		}
		dest, i = unescape(s[i+1:j]), j+1
	} else {
		j, depth := i, 0
		for j < len(s) && s[j] > ' ' {
			if s[j] == '\\' && j+1 < len(s) {
				j += 2
				continue
			}
			if s[j] == '(' {
				depth++
			} else if s[j] == ')' {
				if depth == 0 {
					break
				}
				depth--
			}
			j++
		}
		if j == i && ref {
			return "", "", 0, false
		}
		dest, i = unescape(s[i:j]), j
	}
	before := i
	skip()
	if i < len(s) && (s[i] == '"' || s[i] == '\'' || s[i] == '(') && i > before {
		closer := s[i]
		if closer == '(' {
			closer = ')'
		}
		j := i + 1
		for j < len(s) && s[j] != closer {
			if s[j] == '\\' {
				j++
			}
			j++
		}
		if j < len(s) {
			title, i = unescape(s[i+1:j]), j+1
			for i < len(s) && s[i] == ' ' {
				i++
			}
			return dest, title, i, true
		}
	}
	if ref {
		// Without a title the definition ends with its line.
		return dest, "", before, true
	}
	return dest, "", i, true
}

// unescape resolves backslash escapes of ASCII punctuation and numeric
// character references.
func unescape(s string) string {
	if !strings.ContainsAny(s, `\&`) {
		return s
	}
	var b strings.Builder
	for i := 0; i < len(s); i++ {
		if s[i] == '\\' && i+1 < len(s) && isPunct(s[i+1]) {
			i++
			b.WriteByte(s[i])
			continue
		}
		if s[i] == '&' {
			if r, n := numericRef(s[i:]); n > 0 {
				b.WriteRune(r)
				i += n - 1
				continue
			}
		}
		b.WriteByte(s[i])
	}
	return b.String()
}

func isPunct(c byte) bool { return strings.IndexByte("!\"#$%&'()*+,-./:;<=>?@[\\]^_`{|}~", c) >= 0 }

// numericRef decodes &#123; or &#x1F; at the start of s.
func numericRef(s string) (rune, int) {
	if !strings.HasPrefix(s, "&#") {
		return 0, 0
	}
	i, base := 2, 10
	if i < len(s) && (s[i] == 'x' || s[i] == 'X') {
		i, base = 3, 16
	}
	j := i
	for j < len(s) && j-i < 7 && strings.IndexByte("0123456789abcdefABCDEF"[:base+(base-10)], s[j]) >= 0 {
		j++
	}
	if j == i || j >= len(s) || s[j] != ';' {
		return 0, 0
	}
	v, err := strconv.ParseUint(s[i:j], base, 32)
	if err != nil || v == 0 || v > 0x10FFFF || v >= 0xD800 && v <= 0xDFFF {
		return '\uFFFD', j + 1
	}
	return rune(v), j + 1
}

// entityLen is the length of a named or numeric entity reference at the
// start of s, or 0.
func entityLen(s string) int {
	if _, n := numericRef(s); n > 0 {
		return n
	}
	j := 1
	for j < len(s) && j < 33 && (s[j] >= 'a' && s[j] <= 'z' || s[j] >= 'A' && s[j] <= 'Z' || j > 1 && s[j] >= '0' && s[j] <= '9') {
		j++
	}
	if j > 2 && j < len(s) && s[j] == ';' {
		return j + 1
	}
	return 0
}

func (m *mdDoc) render(b *strings.Builder, blocks []*mdBlock, tight bool) {
	for _, x := range blocks {
		switch x.kind {
		case mdPara:
			if tight {
				b.WriteString(m.inline(x.text, false))
				b.WriteByte('\n')
			} else {
				b.WriteString("<p>" + m.inline(x.text, false) + "</p>\n")
			}
		case mdHeading:
			h := strconv.Itoa(x.level)
			b.WriteString("<h" + h + ">" + m.inline(x.text, false) + "</h" + h + ">\n")
		case mdCode:
			b.WriteString("<pre><code")
			if lang, _, _ := strings.Cut(x.info, " "); lang != "" {
				b.WriteString(` class="language-` + html.EscapeString(unescape(lang)) + `"`)
			}
			b.WriteString(">" + html.EscapeString(x.text) + "</code></pre>\n")
		case mdMath:
			b.WriteString("<div class=\"math-display\">" + mathHTML(x.text, true) + "</div>\n")
		case mdRule:
			b.WriteString("<hr>\n")
		case mdRaw:
			b.WriteString("<!-- raw HTML omitted -->\n")
		case mdQuote:
			b.WriteString("<blockquote>\n")
			m.render(b, x.children, false)
			b.WriteString("</blockquote>\n")
		case mdList:
			tag := "ul"
			if x.ordered {
				tag = "ol"
			}
			b.WriteString("<" + tag)
			if x.ordered && x.start != 1 {
				b.WriteString(` start="` + strconv.Itoa(x.start) + `"`)
			}
			b.WriteString(">\n")
			for _, item := range x.items {
				b.WriteString("<li>")
				if len(item) > 0 && (x.loose || item[0].kind != mdPara) {
					b.WriteByte('\n')
				}
				var ib strings.Builder
				m.render(&ib, item, !x.loose)
				s := ib.String()
				if !x.loose && len(item) > 0 && item[len(item)-1].kind == mdPara {
					s = strings.TrimSuffix(s, "\n")
				}
				b.WriteString(s)
				b.WriteString("</li>\n")
			}
			b.WriteString("</" + tag + ">\n")
		}
	}
}

// mdDelim is a run of * or _ that may open or close emphasis.
type mdDelim struct {
	at          int // index of the piece holding the run
	ch          byte
	n, orig     int
	open, close bool
}

// inline renders the inline content of a paragraph or heading. Emphasis
// follows the delimiter-run rules of CommonMark (section 6.2).
func (m *mdDoc) inline(s string, inLink bool) string {
	var pieces []string
	var delims []mdDelim
	var text strings.Builder
	flush := func() {
		if text.Len() > 0 {
			pieces = append(pieces, text.String())
			text.Reset()
		}
	}
	emit := func(h string) { flush(); pieces = append(pieces, h) }
	for i := 0; i < len(s); {
		c := s[i]
		switch c {
		case '\\':
			if i+1 < len(s) && s[i+1] == '\n' {
				emit("<br>\n")
				i += 2
				continue
			}
			if i+1 < len(s) && isPunct(s[i+1]) {
				text.WriteString(html.EscapeString(s[i+1 : i+2]))
				i += 2
				continue
			}
		case '\n':
			t := strings.TrimRight(text.String(), " ")
			hard := text.Len()-len(t) >= 2
			text.Reset()
			text.WriteString(t)
			if hard {
				emit("<br>\n")
			} else {
				text.WriteByte('\n')
			}
			i++
			for i < len(s) && s[i] == ' ' {
				i++
			}
			continue
		case '`':
			j := i
			for j < len(s) && s[j] == '`' {
				j++
			}
			if end := closingTicks(s, j, j-i); end >= 0 {
				code := strings.ReplaceAll(s[j:end], "\n", " ")
				if len(code) > 2 && code[0] == ' ' && code[len(code)-1] == ' ' && strings.Trim(code, " ") != "" {
					code = code[1 : len(code)-1]
				}
				emit("<code>" + html.EscapeString(code) + "</code>")
				i = end + j - i
				continue
			}
			text.WriteString(s[i:j])
			i = j
			continue
		case '$':
			if h, n := inlineMath(s[i:]); n > 0 {
				emit(h)
				i += n
				continue
			}
		case '<':
			if h, n := m.angle(s[i:]); n > 0 {
				emit(h)
				i += n
				continue
			}
		case '&':
			if r, n := numericRef(s[i:]); n > 0 {
				text.WriteString(html.EscapeString(string(r)))
				i += n
				continue
			}
			if n := entityLen(s[i:]); n > 0 {
				text.WriteString(s[i : i+n])
				i += n
				continue
			}
		case '!', '[':
			if h, n := m.link(s, i, inLink); n > 0 {
				emit(h)
				i += n
				continue
			}
		case '*', '_':
			j := i
			for j < len(s) && s[j] == c {
				j++
			}
			var before, after rune = ' ', ' '
			if i > 0 {
				before = rune(s[i-1])
			}
			if j < len(s) {
				after = rune(s[j])
			}
			lf := !isSpace(after) && (!isPunctRune(after) || isSpace(before) || isPunctRune(before))
			rf := !isSpace(before) && (!isPunctRune(before) || isSpace(after) || isPunctRune(after))
			d := mdDelim{ch: c, n: j - i, orig: j - i, open: lf, close: rf}
			if c == '_' {
				d.open = lf && (!rf || isPunctRune(before))
				d.close = rf && (!lf || isPunctRune(after))
			}
			flush()
			d.at = len(pieces)
			pieces = append(pieces, s[i:j])
			delims = append(delims, d)
			i = j
			continue
		}
		text.WriteString(html.EscapeString(s[i : i+1]))
		i++
	}
	flush()
	emphasis(pieces, delims)
	return strings.Join(pieces, "")
}

func isSpace(r rune) bool { return r == ' ' || r == '\n' || r == '\t' }

func isPunctRune(r rune) bool { return r < 0x80 && isPunct(byte(r)) }

// emphasis matches delimiter runs from left to right (process emphasis,
// CommonMark appendix A) and rewrites the pieces holding them.
func emphasis(pieces []string, ds []mdDelim) {
	opens := make([]string, len(pieces))  // tags opened after a piece's text
	closes := make([]string, len(pieces)) // tags closed before it
	for c := 0; c < len(ds); c++ {
		if !ds[c].close || ds[c].n == 0 {
			continue
		}
		for o := c - 1; o >= 0; o-- {
			if ds[o].ch != ds[c].ch || !ds[o].open || ds[o].n == 0 {
				continue
			}
			if (ds[o].close || ds[c].open) && (ds[o].orig+ds[c].orig)%3 == 0 && (ds[o].orig%3 != 0 || ds[c].orig%3 != 0) {
				continue
			}
			k, tag := 1, "em"
			if ds[o].n >= 2 && ds[c].n >= 2 {
				k, tag = 2, "strong"
			}
			ds[o].n -= k
			ds[c].n -= k
			opens[ds[o].at] = "<" + tag + ">" + opens[ds[o].at]
			closes[ds[c].at] += "</" + tag + ">"
			for x := o + 1; x < c; x++ {
				ds[x].open, ds[x].close = false, false // runs between stay text
			}
			if ds[c].n > 0 {
				c-- // match the rest of this run again
			}
			break
		}
	}
	for _, d := range ds {
		p := d.at
		pieces[p] = closes[p] + strings.Repeat(string(d.ch), d.n) + opens[p]
	}
}

// closingTicks finds a run of exactly n backticks at or after j.
func closingTicks(s string, j, n int) int {
	for j < len(s) {
		k := strings.IndexByte(s[j:], '`')
		if k < 0 {
			return -1
		}
		j += k
		e := j
		for e < len(s) && s[e] == '`' {
			e++
		}
		if e-j == n {
			return j
		}
		j = e
	}
	return -1
}

// inlineMath reads $…$ or $$…$$ within one line. An opening $ must be
// followed, and a closing $ preceded, by a non-space, and a closing $ must
// not be followed by a digit, so that prices such as $5 and $10 stay text.
func inlineMath(line string) (string, int) {
	if i := strings.IndexByte(line, '\n'); i >= 0 {
		line = line[:i]
	}
	display := len(line) > 1 && line[1] == '$'
	open := 1
	if display {
		open = 2
	}
	rest := line[open:]
	if len(rest) == 0 || rest[0] == ' ' {
		return "", 0
	}
	for i := 0; i < len(rest); i++ {
		switch rest[i] {
		case '\\':
			i++
		case '$':
			if display {
				if i+1 < len(rest) && rest[i+1] == '$' && i > 0 {
					return mathHTML(rest[:i], true), open + i + 2
				}
				continue
			}
			if i == 0 || rest[i-1] == ' ' || i+1 < len(rest) && rest[i+1] >= '0' && rest[i+1] <= '9' {
				continue
			}
			return mathHTML(rest[:i], false), open + i + 1
		}
	}
	return "", 0
}

// angle reads an autolink or a raw HTML tag at the start of s.
func (m *mdDoc) angle(s string) (string, int) {
	end := strings.IndexAny(s[1:], "<>")
	if end >= 0 && s[1+end] == '>' {
		in := s[1 : 1+end]
		if !strings.ContainsAny(in, " \n") {
			if k := strings.IndexByte(in, ':'); k >= 2 && k <= 32 && isScheme(in[:k]) {
				if SafeLink(in) {
					return `<a href="` + attr(urlEscape(in)) + `" rel="noopener noreferrer nofollow">` + html.EscapeString(in) + "</a>", end + 2
				}
				return html.EscapeString(in), end + 2
			}
			if at := strings.IndexByte(in, '@'); at > 0 && at < len(in)-1 && !strings.ContainsAny(in, `\`) {
				return html.EscapeString(in), end + 2 // e-mail links are not allowed
			}
		}
	}
	switch {
	case strings.HasPrefix(s, "<!--"):
		if e := strings.Index(s[4:], "-->"); e >= 0 {
			return "<!-- raw HTML omitted -->", e + 7
		}
	case len(s) > 1 && (s[1] == '/' || s[1] == '?' || s[1] == '!' || s[1] >= 'a' && s[1] <= 'z' || s[1] >= 'A' && s[1] <= 'Z'):
		if e := tagEnd(s); e > 0 {
			return "<!-- raw HTML omitted -->", e
		}
	}
	return "", 0
}

func isScheme(s string) bool {
	for i := 0; i < len(s); i++ {
		c := s[i] | 0x20
		if !(c >= 'a' && c <= 'z' || i > 0 && (s[i] >= '0' && s[i] <= '9' || strings.IndexByte("+.-", s[i]) >= 0)) {
			return false
		}
	}
	return true
}

// tagEnd returns the length of an HTML tag at the start of s (quotes in
// attribute values respected), or 0.
func tagEnd(s string) int {
	i := 1
	if s[i] == '/' || s[i] == '?' || s[i] == '!' {
		i++
	}
	if i >= len(s) || !(s[i]|0x20 >= 'a' && s[i]|0x20 <= 'z') {
		return 0
	}
	if s[1] != '?' && s[1] != '!' {
		// A tag name, then attributes or the end of the tag.
		for i < len(s) && (s[i]|0x20 >= 'a' && s[i]|0x20 <= 'z' || s[i] >= '0' && s[i] <= '9' || s[i] == '-') {
			i++
		}
		if i < len(s) && strings.IndexByte(" \n/>", s[i]) < 0 {
			return 0
		}
	}
	var q byte
	for ; i < len(s); i++ {
		switch {
		case q != 0:
			if s[i] == q {
				q = 0
			}
		case s[i] == '"' || s[i] == '\'':
			q = s[i]
		case s[i] == '<':
			return 0
		case s[i] == '>':
			return i + 1
		}
	}
	return 0
}

// link reads a link or image starting at s[i] ('[' or "!["): inline
// (destination and title in parentheses) or by reference ([text][label],
// [label][] or [label]).
func (m *mdDoc) link(s string, i int, inLink bool) (string, int) {
	image := s[i] == '!'
	open := i
	if image {
		if i+1 >= len(s) || s[i+1] != '[' {
			return "", 0
		}
		open++
	}
	end := labelEnd(s, open)
	if end < 0 {
		return "", 0
	}
	label := s[open+1 : end]
	var dest, title string
	n := 0
	switch {
	case end+1 < len(s) && s[end+1] == '(':
		d, t, k, ok := destTitle(s, end+2, false)
		if ok && k < len(s) && s[k] == ')' {
			dest, title, n = d, t, k+1
			break
		}
		fallthrough
	default:
		key := label
		n = end + 1
		if end+1 < len(s) && s[end+1] == '[' {
			if e := labelEnd(s, end+1); e >= 0 {
				if k := s[end+2 : e]; k != "" {
					key = k
				}
				n = e + 1
			}
		}
		r, ok := m.refs[normLabel(key)]
		if !ok {
			return "", 0
		}
		dest, title = r.dest, r.title
	}
	n -= i
	if image {
		return `<span class="image-omitted">[image: ` + html.EscapeString(plainText(label)) + `]</span>`, n
	}
	if inLink {
		return "", 0
	}
	text := m.inline(label, true)
	if !SafeLink(dest) {
		return text, n
	}
	a := `<a href="` + attr(urlEscape(dest)) + `"`
	if title != "" {
		a += ` title="` + attr(title) + `"`
	}
	if !strings.HasPrefix(dest, "#") {
		a += ` rel="noopener noreferrer nofollow"`
	}
	return a + ">" + text + "</a>", n
}

// plainText is the text of inline markdown without its markup, for the
// alternative text of an image.
func plainText(s string) string {
	s = unescape(s)
	return strings.NewReplacer("*", "", "_", "", "`", "", "[", "", "]", "").Replace(s)
}

// attr escapes an attribute value; every & is escaped, so the browser sees
// exactly the string that was checked.
func attr(s string) string { return html.EscapeString(s) }

// urlEscape percent-encodes bytes that may not appear in a URL as written,
// keeping existing %XX escapes.
func urlEscape(s string) string {
	const hex = "0123456789ABCDEF"
	var b strings.Builder
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c > ' ' && c < 0x7f && c != '"' && c != '<' && c != '>' && c != '\\' && c != '^' && c != '`' && c != '{' && c != '|' && c != '}' {
			b.WriteByte(c)
			continue
		}
		b.WriteByte('%')
		b.WriteByte(hex[c>>4])
		b.WriteByte(hex[c&15])
	}
	return b.String()
}

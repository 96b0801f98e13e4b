package notebook

import "gapbook/notebook/markdown"

func init() { Register(note{}) }

// note is text in markdown with mathematics; it computes nothing.
type note struct{}

func (note) Name() string { return "note" }
func (note) Doc() string  { return "Text in markdown, with mathematics between $…$ or $$…$$." }
func (note) Inputs() []Input {
	return []Input{{Name: "text", Doc: "markdown text", Type: Text, Default: ""}}
}
func (note) Evaluate(*Context, Values) (*Results, error) { return &Results{}, nil }

// RenderHTML renders the note's markdown under the policy of Markdown.
func (note) RenderHTML(in Values, _ *Results) string { return markdown.Render(in.Text("text")) }

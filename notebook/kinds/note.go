package kinds

import (
	"gapbook/notebook"
	"gapbook/notebook/markdown"
)

func init() { notebook.Register(note{}) }

// note is text in markdown with mathematics; it computes nothing.
type note struct{}

func (note) Name() string { return "note" }
func (note) Doc() string  { return "Text in markdown, with mathematics between $…$ or $$…$$." }
func (note) Inputs() []notebook.Input {
	return []notebook.Input{{Name: "text", Doc: "markdown text", Type: notebook.Text, Default: ""}}
}
func (note) Evaluate(*notebook.Context, notebook.Values) (*notebook.Results, error) {
	return &notebook.Results{}, nil
}

// RenderHTML renders the note's markdown under the policy of Markdown.
func (note) RenderHTML(in notebook.Values, _ *notebook.Results) string {
	return markdown.Render(in.Text("text"))
}

// Package testkinds registers cell kinds used only by the browser tests:
// "ramp", a small table and scalars computed from numeric inputs, "stall",
// which runs until it is cancelled, and "halt", which ends the engine as a
// crash would. The production WebAssembly never imports this package; the
// tests build it with -tags gapbooktest.
package testkinds

import (
	"math"
	"os"
	"time"

	"gapbook/notebook"
)

func init() {
	notebook.Register(ramp{})
	notebook.Register(stall{})
	notebook.Register(halt{})
}

// halt ends the program, as a fatal error in a kind would: the page must
// start a fresh engine and keep the notebook.
type halt struct{}

func (halt) Name() string { return "halt" }
func (halt) Doc() string  { return "Test only: ends the engine, as a crash would." }
func (halt) Inputs() []notebook.Input {
	return []notebook.Input{{Name: "code", Doc: "exit status", Type: notebook.Integer, Default: 3, Low: notebook.AtLeast(1), High: notebook.AtMost(100)}}
}

func (halt) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	os.Exit(in.Int("code"))
	return nil, nil
}

// ramp tabulates e(h) = a·h^k for h = 1/2, 1/4, … (n rows) and reports
// the rate of the last two rows, which must equal k, and the sum of e.
type ramp struct{}

func (ramp) Name() string { return "ramp" }
func (ramp) Doc() string {
	return "Test only: a table of a·h^k over halved h, with its observed rate."
}
func (ramp) Inputs() []notebook.Input {
	return []notebook.Input{
		{Name: "a", Doc: "factor", Type: notebook.Number, Default: 1.0, Low: notebook.Above(0)},
		{Name: "k", Doc: "exponent of h", Type: notebook.Number, Default: 2.0, Low: notebook.AtLeast(0), High: notebook.AtMost(10)},
		{Name: "n", Doc: "number of rows", Type: notebook.Integer, Default: 5, Low: notebook.AtLeast(2), High: notebook.AtMost(40)},
		{Name: "shape", Doc: "how the factor enters", Type: notebook.Choice, Default: "plain", Choices: []string{"plain", "squared"}},
		{Name: "from", Doc: "a cell whose first scalar scales a (optional)", Type: notebook.Ref, Default: ""},
	}
}

func (ramp) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	a, k, n := in.Number("a"), in.Number("k"), in.Int("n")
	if in.Text("shape") == "squared" {
		a *= a
	}
	if id := in.Text("from"); id != "" {
		r := c.Results(id)
		if r == nil || len(r.Scalars) == 0 {
			return nil, notebook.FieldErr("from", "cell %s has no scalar results", id)
		}
		a *= r.Scalars[0].Value
	}
	t := notebook.Table{Name: "conv", Title: "a·h^k", Columns: []notebook.Column{{Name: "h"}, {Name: "e"}}}
	sum := 0.0
	for i := 1; i <= n; i++ {
		h := math.Ldexp(1, -i)
		e := a * math.Pow(h, k)
		sum += e
		t.Rows = append(t.Rows, []float64{h, e})
	}
	last, prev := t.Rows[n-1], t.Rows[n-2]
	rate := math.Log(last[1]/prev[1]) / math.Log(last[0]/prev[0])
	return &notebook.Results{
		Scalars: []notebook.Scalar{
			{Name: "sum", Value: sum, Label: notebook.Guaranteed},
			{Name: "rate", Value: rate, Label: notebook.Estimate},
			{Name: "k", Value: k, Label: notebook.Reference},
		},
		Tables: []notebook.Table{t},
	}, nil
}

// stall reports progress until cancelled or until seconds have passed.
type stall struct{}

func (stall) Name() string { return "stall" }
func (stall) Doc() string {
	return "Test only: computes nothing for a while, reporting progress, until cancelled."
}
func (stall) Inputs() []notebook.Input {
	return []notebook.Input{{Name: "seconds", Doc: "how long", Type: notebook.Number, Default: 60.0, Low: notebook.Above(0), High: notebook.AtMost(600)}}
}

func (stall) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	d := time.Duration(in.Number("seconds") * float64(time.Second))
	start := time.Now()
	x := 0.0
	// Busy on purpose: a WebAssembly worker that never yields can only be
	// stopped by terminating it, which is what the page's cancel does.
	for time.Since(start) < d {
		if err := c.Err(); err != nil {
			return nil, err
		}
		for i := 0; i < 100000; i++ {
			x += math.Sqrt(float64(i))
		}
		c.Progress(float64(time.Since(start))/float64(d), "stalling")
	}
	return &notebook.Results{Scalars: []notebook.Scalar{{Name: "work", Value: math.Floor(x / 1e9), Label: notebook.Estimate}}}, nil
}

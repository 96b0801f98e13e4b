package notebook

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"math/rand"
	"reflect"
	"testing"
	"testing/quick"
)

// genNotebook is a random notebook for the load → save property.
type genNotebook struct{ nb *Notebook }

func randString(r *rand.Rand) string {
	pool := []rune("abcXYZ09 _-<>&\"'\\/$\n\té€ω∇𝔼\u2028")
	n := r.Intn(12)
	out := make([]rune, n)
	for i := range out {
		out[i] = pool[r.Intn(len(pool))]
	}
	return string(out)
}

func randFloat(r *rand.Rand) float64 {
	switch r.Intn(10) {
	case 0:
		return math.NaN()
	case 1:
		return math.Inf(1 - 2*r.Intn(2))
	case 2:
		return math.Copysign(0, -1)
	case 3:
		return 5e-324
	case 4:
		return math.MaxFloat64
	}
	return r.NormFloat64() * math.Pow(10, float64(r.Intn(40)-20))
}

func randFloats(r *rand.Rand, n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = randFloat(r)
	}
	return v
}

// randJSON returns a random JSON value; numbers finite (JSON has no NaN).
func randJSON(r *rand.Rand, depth int) any {
	k := r.Intn(7)
	if depth > 3 {
		k %= 4
	}
	switch k {
	case 0:
		return nil
	case 1:
		return r.Intn(2) == 0
	case 2:
		return json.Number(fmt.Sprint([]string{"0", "-1", "2.50", "1e-7", "1.0E3", "123456789012345678901234567890"}[r.Intn(6)]))
	case 3:
		return randString(r)
	case 4:
		l := make([]any, r.Intn(4))
		for i := range l {
			l[i] = randJSON(r, depth+1)
		}
		return l
	}
	m := map[string]any{}
	for range r.Intn(4) {
		m[randString(r)] = randJSON(r, depth+1)
	}
	return m
}

func randExtra(r *rand.Rand, avoid ...string) map[string]json.RawMessage {
	if r.Intn(2) == 0 {
		return nil
	}
	m := map[string]json.RawMessage{}
	for range 1 + r.Intn(3) {
		k := "x" + randString(r)
		m[k] = rawJSON(randJSON(r, 1))
	}
	return m
}

func randResults(r *rand.Rand) *Results {
	res := &Results{}
	for i := range r.Intn(3) {
		res.Scalars = append(res.Scalars, Scalar{Name: fmt.Sprintf("s%d%s", i, randString(r)), Value: randFloat(r), Label: []Label{Guaranteed, Estimate, Reference}[r.Intn(3)], Unit: randString(r)})
	}
	for range r.Intn(2) {
		cols := 1 + r.Intn(3)
		t := Table{Name: "t" + randString(r), Title: randString(r)}
		for j := range cols {
			t.Columns = append(t.Columns, Column{Name: fmt.Sprint("c", j), Unit: randString(r)})
		}
		rows := r.Intn(4)
		for range rows {
			t.Rows = append(t.Rows, randFloats(r, cols))
		}
		if rows > 0 && r.Intn(2) == 0 {
			for range rows {
				t.Labels = append(t.Labels, randString(r))
			}
		}
		res.Tables = append(res.Tables, t)
	}
	for range r.Intn(2) {
		n := r.Intn(4)
		res.Plots = append(res.Plots, Plot{Name: "p", Title: randString(r), XLabel: randString(r), LogX: r.Intn(2) == 0,
			Series: []Series{{Name: randString(r), X: randFloats(r, n), Y: randFloats(r, n)}}})
	}
	if r.Intn(3) == 0 {
		f := Field{Name: "u", X: []float64{0, 1, 0}, Y: []float64{0, 0, 1}, Tri: [][3]int32{{0, 1, 2}}, PerCell: r.Intn(2) == 0}
		if f.PerCell {
			f.Values = randFloats(r, 1)
		} else {
			f.Values = randFloats(r, 3)
		}
		res.Fields = append(res.Fields, f)
	}
	return res
}

func (genNotebook) Generate(r *rand.Rand, size int) reflect.Value {
	nb := &Notebook{Title: randString(r), Extra: randExtra(r)}
	for i := range r.Intn(6) {
		c := &Cell{ID: fmt.Sprintf("c%d_%d", i, r.Intn(100)), Kind: []string{"note", "plot", "scale", "future"}[r.Intn(4)], Inputs: map[string]json.RawMessage{}, Extra: randExtra(r)}
		for range r.Intn(4) {
			c.Inputs[randString(r)] = rawJSON(randJSON(r, 0))
		}
		if r.Intn(2) == 0 {
			res := randResults(r)
			c.Saved = &Saved{Hash: res.Digest(), Digest: res.Digest(), Results: res, Extra: randExtra(r)}
		}
		nb.Cells = append(nb.Cells, c)
	}
	for range r.Intn(3) {
		run := Run{At: "2026-01-01T00:00:00Z", Label: randString(r), Extra: randExtra(r),
			Inputs: map[string]map[string]json.RawMessage{"c": {"p": json.RawMessage("3")}},
			Cells:  map[string]RunCell{"c": {Status: StatusOK, Digest: "d", Scalars: randResults(r).Scalars}}}
		if r.Intn(2) == 0 {
			run.Override = &Override{"c", "p", json.RawMessage("1.5")}
		}
		nb.History = append(nb.History, run)
	}
	return reflect.ValueOf(genNotebook{nb})
}

func TestLoadSaveLossless(t *testing.T) {
	prop := func(g genNotebook) bool {
		first, err := Save(g.nb)
		if err != nil {
			t.Log(err)
			return false
		}
		nb, err := Load(first)
		if nb == nil {
			t.Logf("%v\n%s", err, first)
			return false
		}
		second, err := Save(nb)
		if err != nil || !bytes.Equal(first, second) {
			t.Logf("differs:\n%s\n----\n%s", first, second)
			return false
		}
		for i, c := range g.nb.Cells {
			if c.Saved != nil && nb.Cells[i].Saved.Results.Digest() != c.Saved.Results.Digest() {
				t.Logf("cell %d: digest changed", i)
				return false
			}
		}
		return true
	}
	if err := quick.Check(prop, &quick.Config{MaxCount: 300, Rand: rand.New(rand.NewSource(1))}); err != nil {
		t.Error(err)
	}
}

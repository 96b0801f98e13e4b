package kinds

import (
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gapbook/notebook"
)

// TestMigrateV1Examples loads every example as version 1 saved it, with its
// results (testdata/v1, written by the version-1 code from the examples of
// that time), and checks the migration: no input is called alpha any more,
// every saved result stays current (the saved hashes move to version 2),
// the inputs are those of the version-2 example, no saved number changes,
// and a rerun reproduces the saved digests of the cells that do not depend
// on a Newton solve.
func TestMigrateV1Examples(t *testing.T) {
	files, _ := filepath.Glob("testdata/v1/*.gapbook")
	if len(files) != 5 {
		t.Fatalf("%d version-1 examples, want 5", len(files))
	}
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			data, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(string(data), `"gapbook": 1,`) || !strings.Contains(string(data), `"alpha"`) {
				t.Fatal("not a version-1 file with an alpha input")
			}
			nb, err := notebook.Load(data)
			if err != nil {
				t.Fatal(err)
			}
			if len(nb.Migration) == 0 || !strings.Contains(strings.Join(nb.Migration, "\n"), "input alpha renamed p") {
				t.Errorf("migration notes %q", nb.Migration)
			}
			for _, c := range nb.Cells {
				if _, ok := c.Inputs["alpha"]; ok {
					t.Errorf("cell %s keeps an input alpha", c.ID)
				}
			}
			for _, c := range nb.Cells {
				if c.Kind == "bound" && c.Saved != nil && len(c.Saved.Results.Intervals) == 0 {
					t.Errorf("bound cell %s: no intervals added to its saved results", c.ID)
				}
			}
			for _, o := range nb.States() {
				if o.Status != notebook.StatusOK {
					t.Errorf("cell %s is %s after migration, want its saved results current", o.ID, o.Status)
				}
			}
			cur, err := os.ReadFile(filepath.Join("..", "..", "examples", filepath.Base(f)))
			if err != nil {
				t.Fatal(err)
			}
			nb2, err := notebook.Load(cur)
			if err != nil {
				t.Fatal(err)
			}
			h1, h2 := nb.States(), nb2.States()
			for i := range h1 {
				if h1[i].Hash == "" || h1[i].Hash != h2[i].Hash {
					t.Errorf("cell %s: migrated inputs differ from the version-2 example", nb.Cells[i].ID)
				}
			}
			// The migration renames and changes no number: every saved
			// scalar is the version-1 file's, under its new name.
			var raw struct {
				Cells []struct {
					ID      string
					Results struct {
						Scalars []struct {
							Name  string
							Value json.RawMessage
						}
					}
				}
			}
			if err := json.Unmarshal(data, &raw); err != nil {
				t.Fatal(err)
			}
			for i, c := range raw.Cells {
				for _, sc := range c.Results.Scalars {
					name := map[string]string{"alpha": "p", "alpha_eigenvalue": "p_eigenvalue"}[sc.Name]
					if name == "" {
						name = sc.Name
					}
					got, ok := nb.Cells[i].Saved.Results.Scalar(name)
					if want, err := strconv.ParseFloat(string(sc.Value), 64); err == nil && (!ok || got.Value != want) {
						t.Errorf("cell %s: saved %s = %v after migration, %v in the version-1 file", c.ID, name, got.Value, want)
					}
				}
			}
			// A rerun computes every cell; the cells that do not depend on
			// a Newton solve reproduce their saved digests. (The solver's
			// start and stopping scale changed after version 1 — the
			// solver-robustness work — so solved fields and the bounds on
			// them differ from the saved ones by about 1e-10 relative, and
			// Newton histories by a step or two.)
			ev, err := notebook.NewEngine().Evaluate(context.Background(), nb, notebook.Options{})
			if err != nil {
				t.Fatal(err)
			}
			for _, o := range ev.Cells {
				solved := map[string]bool{"solve": true, "bound": true, "adapt": true, "evolve": true, "sweep": true, "plot": true}[o.Kind]
				if o.Status != notebook.StatusOK || !solved && o.Reproduced != "yes" {
					t.Errorf("cell %s: %s, reproduced %q %v", o.ID, o.Status, o.Reproduced, o.Differences)
				}
			}
		})
	}
}

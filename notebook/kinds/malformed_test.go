package kinds

import (
	"context"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
	"time"

	"gapbook/notebook"
)

// openMalformed loads and evaluates one file of the corpus of malformed
// studies and returns what a person would read about it.
func openMalformed(t testing.TB, path string) []string {
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	nb, err := notebook.Load(data)
	var msgs []string
	if err != nil {
		msgs = append(msgs, err.Error())
	}
	if nb == nil {
		return msgs
	}
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	ev, err := notebook.NewEngine().Evaluate(ctx, nb, notebook.Options{})
	if err != nil {
		msgs = append(msgs, err.Error())
		return msgs
	}
	for _, o := range ev.Cells {
		if o.Err != nil {
			msgs = append(msgs, o.Err.Error())
		}
	}
	_ = notebook.Report(nb, ev)
	return msgs
}

// oddButValid are the files of the corpus that look hostile but are
// studies: a byte-order mark, control characters in text, a source that
// is 0 but at one edge (x^1e300), a past run that overrode a cell since
// deleted.
var oddButValid = map[string]bool{"bom": true, "control-chars": true, "f-power-huge": true, "history-override": true}

// The corpus of malformed studies (testdata/malformed: broken JSON, wrong
// versions, hostile ids, inputs out of range, formulas that do not parse
// or do not evaluate, references that cannot be met, inconsistent saved
// results, data that overflow): no file makes a kind panic, every file
// says what is wrong with it, and the odd but valid ones open cleanly.
func TestMalformedCorpus(t *testing.T) {
	files, _ := filepath.Glob("testdata/malformed/*.gapbook")
	if len(files) < 60 {
		t.Fatalf("%d files in the corpus, want at least 60", len(files))
	}
	for _, f := range files {
		name := strings.TrimSuffix(filepath.Base(f), ".gapbook")
		msgs := openMalformed(t, f)
		joined := strings.Join(msgs, "\n")
		if strings.Contains(joined, "internal error") {
			t.Errorf("%s: a kind panicked: %s", name, joined)
		}
		if oddButValid[name] {
			if len(msgs) != 0 {
				t.Errorf("%s: a valid study does not open cleanly: %s", name, joined)
			}
			continue
		}
		if len(msgs) == 0 {
			t.Errorf("%s: opened and computed without a word about what is wrong", name)
		}
	}
}

// BenchmarkMalformedCorpus reports, over the corpus, the slowest file and
// the largest heap growth of loading and evaluating one (the hardening
// target: ≤ 0.2 s and ≤ 11 MB each).
func BenchmarkMalformedCorpus(b *testing.B) {
	files, _ := filepath.Glob("testdata/malformed/*.gapbook")
	var worstT time.Duration
	var worstM uint64
	var slow, big string
	for b.Loop() {
		for _, f := range files {
			runtime.GC()
			var m0, m1 runtime.MemStats
			runtime.ReadMemStats(&m0)
			start := time.Now()
			openMalformed(b, f)
			el := time.Since(start)
			runtime.ReadMemStats(&m1)
			if el > worstT {
				worstT, slow = el, f
			}
			if g := m1.TotalAlloc - m0.TotalAlloc; g > worstM {
				worstM, big = g, f
			}
		}
	}
	b.ReportMetric(worstT.Seconds(), "worst-s")
	b.ReportMetric(float64(worstM)/(1<<20), "worst-alloc-MB")
	b.Logf("slowest %s (%v), most allocation %s (%d MB)", filepath.Base(slow), worstT, filepath.Base(big), worstM>>20)
}

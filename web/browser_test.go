//go:build !js

package web_test

import (
	"bytes"
	"context"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"io/fs"
	"math"
	"net/http/httptest"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"testing/fstest"
	"time"

	"github.com/chromedp/cdproto/page"
	"github.com/chromedp/chromedp"

	"gapbook/cmd/gapbook/batch"
	"gapbook/notebook"
	"gapbook/web"
	_ "gapbook/web/testkinds"
)

// The browser suite: one chromium and one test build of the engine (with
// the test kinds "ramp" and "stall") shared by every test of the package.

var (
	suiteOnce   sync.Once
	suiteErr    error
	suiteSkip   string
	suiteAssets fs.FS
	browserCtx  context.Context
	stopBrowser func()
	workDir     string
)

func TestMain(m *testing.M) {
	code := m.Run()
	if stopBrowser != nil {
		stopBrowser()
	}
	if workDir != "" {
		os.RemoveAll(workDir)
	}
	os.Exit(code)
}

func findChromium() string {
	if p := os.Getenv("GAPBOOK_CHROMIUM"); p != "" {
		return p
	}
	for _, n := range []string{"chromium", "chromium-browser", "google-chrome", "chrome"} {
		if p, err := exec.LookPath(n); err == nil {
			return p
		}
	}
	return ""
}

// suite builds the test engine and starts the browser once; it skips (or
// fails, with GAPBOOK_REQUIRE_BROWSER=1) when no chromium is found.
func suite(t testing.TB) fs.FS {
	t.Helper()
	suiteOnce.Do(func() {
		chromium := findChromium()
		if chromium == "" {
			suiteSkip = "no chromium found (install it, or set GAPBOOK_CHROMIUM); the browser tests did NOT run"
			return
		}
		workDir, suiteErr = os.MkdirTemp("", "gapbook-web-")
		if suiteErr != nil {
			return
		}
		suiteAssets, suiteErr = buildAssets(workDir, "gapbooktest")
		if suiteErr != nil {
			return
		}
		opts := append(chromedp.DefaultExecAllocatorOptions[:],
			chromedp.ExecPath(chromium), chromedp.NoSandbox,
			chromedp.Flag("headless", true),
			chromedp.Flag("disable-gpu", true), chromedp.Flag("disable-quic", true),
			chromedp.Flag("disable-component-update", true),
			chromedp.Flag("disable-background-networking", true),
			chromedp.Flag("disable-sync", true), chromedp.Flag("no-first-run", true),
			chromedp.Flag("allow-file-access-from-files", false),
			chromedp.UserDataDir(filepath.Join(workDir, "profile")), chromedp.WindowSize(1360, 1000))
		actx, cancelA := chromedp.NewExecAllocator(context.Background(), opts...)
		bctx, cancelB := chromedp.NewContext(actx)
		if err := chromedp.Do(bctx); err != nil {
			cancelB()
			cancelA()
			suiteErr = fmt.Errorf("starting chromium %s: %v", chromium, err)
			return
		}
		browserCtx, stopBrowser = bctx, func() { cancelB(); cancelA() }
	})
	if suiteSkip != "" {
		if os.Getenv("GAPBOOK_REQUIRE_BROWSER") == "1" {
			t.Fatalf("GAPBOOK_REQUIRE_BROWSER=1 but %s", suiteSkip)
		}
		t.Skip("SKIPPED: " + suiteSkip)
	}
	if suiteErr != nil {
		t.Fatal(suiteErr)
	}
	return suiteAssets
}

// buildAssets compiles the engine with the given build tags into dir and
// returns the page's files with it.
func buildAssets(dir, tags string) (fs.FS, error) {
	wasm := filepath.Join(dir, "gapbook.wasm")
	cmd := exec.Command("go", "build", "-tags", tags, "-trimpath", "-ldflags=-s -w", "-o", wasm, "gapbook/wasm")
	cmd.Env = append(os.Environ(), "GOOS=js", "GOARCH=wasm")
	if out, err := cmd.CombinedOutput(); err != nil {
		return nil, fmt.Errorf("building the engine: %v\n%s", err, out)
	}
	goroot, err := exec.Command("go", "env", "GOROOT").Output()
	if err != nil {
		return nil, err
	}
	m := fstest.MapFS{}
	err = fs.WalkDir(web.Assets(), ".", func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, err := fs.ReadFile(web.Assets(), p)
		m[p] = &fstest.MapFile{Data: b}
		return err
	})
	if err != nil {
		return nil, err
	}
	for name, path := range map[string]string{
		"gapbook.wasm": wasm,
		"wasm_exec.js": filepath.Join(strings.TrimSpace(string(goroot)), "lib", "wasm", "wasm_exec.js"),
	} {
		b, err := os.ReadFile(path)
		if err != nil {
			return nil, err
		}
		m[name] = &fstest.MapFile{Data: b}
	}
	return m, nil
}

// tab is one browser tab on a server of one notebook.
type tab struct {
	t       testing.TB
	ctx     context.Context
	url     string
	dialogs atomic.Int32
}

func openTab(t testing.TB, doc []byte) *tab {
	t.Helper()
	assets := suite(t)
	srv := httptest.NewServer(web.Handler(web.Options{Notebook: doc, Assets: assets}))
	t.Cleanup(srv.Close)
	ctx, cancel := chromedp.NewContext(browserCtx)
	t.Cleanup(cancel)
	ctx, cancelT := context.WithTimeout(ctx, 4*time.Minute)
	t.Cleanup(cancelT)
	tb := &tab{t: t, ctx: ctx, url: srv.URL + "/"}
	if err := chromedp.Listen(ctx, func(ev any) {
		if _, ok := ev.(*page.EventJavascriptDialogOpening); ok {
			tb.dialogs.Add(1)
			go chromedp.Call(ctx, page.HandleJavaScriptDialog, page.HandleJavaScriptDialogParams{Accept: false})
		}
	}); err != nil {
		t.Fatal(err)
	}
	return tb
}

func (tb *tab) do(steps ...chromedp.Action[chromedp.Void]) {
	tb.t.Helper()
	if err := chromedp.Do(tb.ctx, steps...); err != nil {
		tb.t.Fatal(err)
	}
}

func eval[T any](tb *tab, js string) T {
	tb.t.Helper()
	v, err := chromedp.Run(tb.ctx, chromedp.Evaluate[T](js, chromedp.EvalAwaitPromise))
	if err != nil {
		tb.t.Fatalf("%s: %v", js, err)
	}
	return v
}

// wait polls a JavaScript condition until it is true.
func (tb *tab) wait(cond string) { tb.waitFor(cond, 40*time.Second) }

// waitFor polls a JavaScript condition until it is true, at most d.
func (tb *tab) waitFor(cond string, d time.Duration) {
	tb.t.Helper()
	var err error
	for try := 0; try < 5; try++ {
		_, err = chromedp.Run(tb.ctx, chromedp.Poll[bool](cond, chromedp.WithPollingTimeout(d), chromedp.WithPollingInterval(25*time.Millisecond)))
		// A navigation can replace the page's context under a poll: poll again.
		if err == nil || !strings.Contains(err.Error(), "context") || tb.ctx.Err() != nil {
			break
		}
		time.Sleep(50 * time.Millisecond)
	}
	if err != nil {
		notice := eval[string](tb, `document.getElementById('notice').textContent`)
		tb.t.Fatalf("waiting for %s: %v (notice: %q)", cond, err, notice)
	}
}

func (tb *tab) load(url string) {
	tb.t.Helper()
	tb.do(chromedp.Navigate(url))
	// The whole notebook computes before the page says it is ready; a
	// numerical study can take a while on a busy machine.
	tb.waitFor(`document.body.dataset.ready === 'true' || document.body.dataset.ready === 'failed'`, 3*time.Minute)
	if r := eval[string](tb, `document.body.dataset.ready`); r != "true" {
		tb.t.Fatalf("the page did not start: %s", eval[string](tb, `document.getElementById('notice').textContent`))
	}
}

func (tb *tab) screenshot(name string) {
	tb.t.Helper()
	// From the top, so the sticky header and runs panel sit where a person sees them.
	eval[bool](tb, `(window.scrollTo(0, 0), true)`)
	b, err := chromedp.Run(tb.ctx, chromedp.FullScreenshot(100))
	if err != nil {
		tb.t.Fatal(err)
	}
	if err := os.MkdirAll(filepath.Join("testdata", "screens"), 0o755); err != nil {
		tb.t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join("testdata", "screens", name+".png"), b, 0o644); err != nil {
		tb.t.Fatal(err)
	}
}

// shot saves a screenshot of the element matched by the CSS selector sel.
func (tb *tab) shot(name, sel string) {
	tb.t.Helper()
	b, err := chromedp.Run(tb.ctx, chromedp.Screenshot(chromedp.CSS(sel)))
	if err != nil {
		tb.t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join("testdata", "screens", name+".png"), b, 0o644); err != nil {
		tb.t.Fatal(err)
	}
}

// shown is a number on the page with the cell and name it belongs to.
type shown struct {
	Cell, Name, Value, Label string
}

func (tb *tab) values() []shown {
	return eval[[]shown](tb, `[...document.querySelectorAll('.cell .value')].map(e => ({
		Cell: e.closest('.cell').dataset.cell, Name: e.dataset.name, Value: e.dataset.value, Label: e.dataset.label}))`)
}

func (tb *tab) statuses() map[string]string {
	return eval[map[string]string](tb, `Object.fromEntries([...document.querySelectorAll('.cell')].map(e => [e.dataset.cell, e.dataset.status]))`)
}

func readFile(t testing.TB, name string) []byte {
	t.Helper()
	b, err := os.ReadFile(name)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// native evaluates a file as `gapbook run --json` does.
func native(t testing.TB, path string) *batch.Output {
	t.Helper()
	var out bytes.Buffer
	if _, _, err := batch.Run(context.Background(), path, batch.Options{JSON: true, Stdout: &out}); err != nil {
		t.Fatal(err)
	}
	var b batch.Output
	if err := json.Unmarshal(out.Bytes(), &b); err != nil {
		t.Fatal(err)
	}
	return &b
}

// compareWithNative checks that every cell's status and every scalar on the
// page equals the native evaluation to 1e-9 relative, and nothing extra is
// shown. It returns the number of values compared.
func compareWithNative(t *testing.T, tb *tab, path string) int {
	want := native(t, path)
	got := tb.values()
	states := tb.statuses()
	type key struct{ cell, name string }
	page := map[key]shown{}
	for _, s := range got {
		if _, dup := page[key{s.Cell, s.Name}]; dup {
			t.Errorf("cell %s shows %s twice", s.Cell, s.Name)
		}
		page[key{s.Cell, s.Name}] = s
	}
	n := 0
	for _, c := range want.Cells {
		// Quantities at round-off level (below 1e-12 of the largest value
		// of their cell, e.g. a residual of 1e-15) differ between native
		// code, which uses assembly in math and gonum, and WebAssembly,
		// which does not; they are compared absolutely at that level.
		scale := 0.0
		for _, v := range c.Values {
			if v.Value != nil {
				scale = max(scale, math.Abs(*v.Value))
			}
		}
		if states[c.ID] != string(c.Status) {
			t.Errorf("cell %s: page says %q, gapbook run says %q (%s)", c.ID, states[c.ID], c.Status, c.Error)
		}
		for name, v := range c.Values {
			s, ok := page[key{c.ID, name}]
			if !ok {
				t.Errorf("cell %s: %s = %v not shown on the page", c.ID, name, v.Value)
				continue
			}
			delete(page, key{c.ID, name})
			n++
			if s.Label != string(v.Label) {
				t.Errorf("cell %s: %s labelled %q on the page, %q natively", c.ID, name, s.Label, v.Label)
			}
			f, err := strconv.ParseFloat(s.Value, 64)
			if v.Value == nil {
				if err == nil && !math.IsNaN(f) && !math.IsInf(f, 0) {
					t.Errorf("cell %s: %s is %s on the page, not finite natively", c.ID, name, s.Value)
				}
				continue
			}
			if err != nil || math.Abs(f-*v.Value) > max(1e-9*math.Abs(*v.Value), 1e-12*scale) {
				t.Errorf("cell %s: %s is %s on the page, %v natively", c.ID, name, s.Value, *v.Value)
			}
		}
	}
	for k, s := range page {
		t.Errorf("cell %s: %s = %s shown on the page but not in gapbook run", k.cell, k.name, s.Value)
	}
	return n
}

func TestDefaultStudyMatchesNative(t *testing.T) {
	for _, path := range []string{"../examples/default.gapbook", "testdata/study.gapbook"} {
		t.Run(filepath.Base(path), func(t *testing.T) {
			tb := openTab(t, readFile(t, path))
			tb.load(tb.url)
			n := compareWithNative(t, tb, path)
			t.Logf("%s: %d values equal to gapbook run --json", path, n)
			if path == "testdata/study.gapbook" && n != 6 {
				t.Errorf("compared %d values, want 6 (3 scalars of 2 ramp cells)", n)
			}
			if c := eval[string](tb, `document.getElementById('caution').textContent`); !strings.Contains(c, "licensed engineers") {
				t.Errorf("caution not shown; got %q", c)
			}
			if path == "testdata/study.gapbook" {
				if k := eval[int](tb, `document.querySelectorAll('#cell-chart svg polyline, #cell-chart svg path').length`); k == 0 {
					t.Error("the plot cell shows no line")
				}
				if k := eval[int](tb, `document.querySelectorAll('#cell-intro math').length`); k < 2 {
					t.Errorf("the note shows %d maths elements, want 2 or more", k)
				}
			}
			tb.screenshot("load-" + strings.TrimSuffix(filepath.Base(path), ".gapbook"))
			// Close-ups of the cells with results, to look at.
			for _, id := range eval[[]string](tb, `[...document.querySelectorAll('.cell')].filter(c => c.querySelector('.results')).map(c => c.id)`) {
				tb.shot("cell-"+strings.TrimPrefix(id, "cell-"), "#"+id)
			}
		})
	}
}

func TestEditInputDependentsStaleThenUpdate(t *testing.T) {
	tb := openTab(t, readFile(t, "testdata/study.gapbook"))
	tb.load(tb.url)
	before := map[string]float64{}
	for _, s := range tb.values() {
		before[s.Cell+"."+s.Name], _ = strconv.ParseFloat(s.Value, 64)
	}
	// Type a = 2 in cell base, as a person would, and leave the field.
	eval[bool](tb, `(() => { const f = document.querySelector('#cell-base [data-input="a"]');
		f.value = '2'; f.dispatchEvent(new Event('change')); return true })()`)
	tb.wait(`document.getElementById('cell-chain').dataset.status === 'stale' && document.getElementById('cell-chart').dataset.status === 'stale'`)
	if st := tb.statuses(); st["intro"] != "ok" {
		t.Errorf("the note went %q; only base and what depends on it should be stale", st["intro"])
	}
	tb.screenshot("edit-stale")
	tb.do(chromedp.Click(chromedp.ID("run-all")))
	tb.wait(`[...document.querySelectorAll('.cell')].every(e => e.dataset.status === 'ok') && !document.body.classList.contains('busy')`)
	after := map[string]float64{}
	for _, s := range tb.values() {
		after[s.Cell+"."+s.Name], _ = strconv.ParseFloat(s.Value, 64)
	}
	// Doubling a doubles base.sum, and chain scales with base.sum: an identity.
	for _, k := range []string{"base.sum", "chain.sum"} {
		if r := after[k] / before[k]; math.Abs(r-2) > 1e-12 {
			t.Errorf("%s: after/before = %v, want 2", k, r)
		}
	}
	if r := after["chain.rate"]; math.Abs(r-1) > 1e-12 {
		t.Errorf("chain.rate = %v, want its exponent 1", r)
	}
	// A bad value is reported beside the field, by the page and the engine.
	eval[bool](tb, `(() => { const f = document.querySelector('#cell-base [data-input="a"]');
		f.value = '-3'; f.dispatchEvent(new Event('change')); return true })()`)
	tb.wait(`document.getElementById('cell-base').dataset.status === 'error'`)
	msg := eval[string](tb, `document.querySelector('#cell-base [data-input="a"]').parentElement.querySelector('.field-msg').textContent`)
	if !strings.Contains(msg, "want") {
		t.Errorf("no message beside the field; got %q", msg)
	}
	tb.screenshot("edit-invalid")
}

// The exponent of the default study's problem cell is edited as a person
// would: every dependent cell goes stale, and after recomputing the bound
// cell shows the new exponent's bounds, which still enclose the error
// (minorant ≤ majorant) and match gapbook run --json on the edited file.
func TestEditExponentInProblemCell(t *testing.T) {
	tb := openTab(t, readFile(t, "../examples/default.gapbook"))
	tb.load(tb.url)
	major := func() float64 {
		for _, s := range tb.values() {
			if s.Cell == "bound" && s.Name == "majorant" {
				v, _ := strconv.ParseFloat(s.Value, 64)
				return v
			}
		}
		t.Fatal("no majorant shown in the bound cell")
		return 0
	}
	before := major()
	// The engine holds its own copy: the edit reaches it as one cell, not
	// as the whole study.
	eval[bool](tb, `(() => { const w = gapbook.worker, post = w.postMessage.bind(w); gapbook.sentLog = [];
		w.postMessage = (m) => { if (typeof m === 'string') gapbook.sentLog.push(JSON.parse(m)); post(m); }; return true })()`)
	eval[bool](tb, `(() => { const f = document.querySelector('#cell-problem [data-input="p"]');
		f.value = '2.5'; f.dispatchEvent(new Event('change')); return true })()`)
	tb.wait(`['mesh', 'solve', 'bound', 'newton'].every(id => document.getElementById('cell-' + id).dataset.status === 'stale')`)
	sent := eval[string](tb, `JSON.stringify(gapbook.sentLog.map(m => [m.op, m.doc === undefined ? '' : 'doc', (m.edit && m.edit.cells || []).map(c => c.id).join(',')]))`)
	if sent != `[["show","","problem"]]` {
		t.Errorf("requests after editing one input: %s; want one show carrying the problem cell alone", sent)
	}
	if st := tb.statuses(); st["about"] != "ok" {
		t.Errorf("the note went %q; only the problem and its dependents should change", st["about"])
	}
	tb.do(chromedp.Click(chromedp.ID("run-all")))
	tb.wait(`[...document.querySelectorAll('.cell')].every(e => e.dataset.status === 'ok') && !document.body.classList.contains('busy')`)
	after := major()
	if after == before {
		t.Errorf("majorant unchanged (%g) after changing the exponent", after)
	}
	var minor float64
	for _, s := range tb.values() {
		if s.Cell == "bound" && s.Name == "minorant" {
			minor, _ = strconv.ParseFloat(s.Value, 64)
		}
	}
	if !(minor > 0 && minor <= after) {
		t.Errorf("minorant %g, majorant %g: not an interval", minor, after)
	}
	// The bound cell shows its error interval as one row with both ends.
	ends := eval[string](tb, `(() => { const r = document.querySelector('#cell-bound tr.interval[data-interval="error"]');
		return r ? [...r.querySelectorAll('.value')].map(v => v.dataset.name).join(',') + ' ' + r.querySelector('.label, [class*=label]')?.textContent : 'none' })()`)
	if !strings.HasPrefix(ends, "minorant,majorant ") {
		t.Errorf("error interval row: %q, want the minorant and the majorant in one row", ends)
	}
	// The same edit natively: the page's values must be those of gapbook run.
	nb, err := notebook.Load(readFile(t, "../examples/default.gapbook"))
	if err != nil {
		t.Fatal(err)
	}
	c, _ := nb.Cell("problem")
	if err := c.SetInput("p", 2.5); err != nil {
		t.Fatal(err)
	}
	doc, err := notebook.Save(nb)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "edited.gapbook")
	if err := os.WriteFile(path, doc, 0o644); err != nil {
		t.Fatal(err)
	}
	if n := compareWithNative(t, tb, path); n < 10 {
		t.Errorf("compared only %d values with the native run", n)
	}
	tb.screenshot("edit-exponent")
}

func TestEditingCells(t *testing.T) {
	tb := openTab(t, readFile(t, "testdata/study.gapbook"))
	tb.load(tb.url)
	key := func(k string) string {
		return `(document.dispatchEvent(new KeyboardEvent('keydown', {key: '` + k + `', altKey: true, bubbles: true})), true)`
	}
	order := func() string {
		return strings.Join(eval[[]string](tb, `[...document.querySelectorAll('.cell')].map(c => c.dataset.cell)`), " ")
	}
	// Duplicate base (Alt+C), move the copy down (Alt+↓), add a note (Alt+N).
	eval[bool](tb, `(gapbook.api.focusCell('base'), true)`)
	eval[bool](tb, key("c"))
	tb.wait(`!!document.getElementById('cell-base-2')`)
	eval[bool](tb, key("ArrowDown"))
	tb.wait(`document.querySelectorAll('.cell')[3].dataset.cell === 'base-2'`)
	eval[bool](tb, `(document.getElementById('add-kind').value = 'note', true)`)
	eval[bool](tb, key("n"))
	tb.wait(`!!document.getElementById('cell-note')`)
	if got, want := order(), "intro base chain base-2 note chart"; got != want {
		t.Errorf("cells in order %q, want %q", got, want)
	}
	// The note's markdown previews live, with mathematics as MathML.
	eval[bool](tb, `(() => { document.querySelector('#cell-note .note-toggle').click();
		const a = document.querySelector('#cell-note .note-src');
		a.value = '**Rate** $h^{k}$ <script>window.pwned = 1</script>'; a.dispatchEvent(new Event('input')); return true })()`)
	tb.wait(`!!document.querySelector('#cell-note .note-body math msup') && !!document.querySelector('#cell-note .note-body strong')`)
	if p := eval[any](tb, `window.pwned`); p != nil {
		t.Error("a script in a note ran")
	}
	tb.screenshot("editing")
	// The printable report carries the caution and the cells.
	rep := eval[string](tb, `gapbook.api.ask('report').then(r => r.html)`)
	for _, want := range []string{"Caution.", "licensed engineers", `id="cell-base-2"`, "Content-Security-Policy"} {
		if !strings.Contains(rep, want) {
			t.Errorf("report lacks %q", want)
		}
	}
}

func TestSaveReloadShareAutosave(t *testing.T) {
	tb := openTab(t, readFile(t, "testdata/study.gapbook"))
	tb.load(tb.url)
	eval[bool](tb, `(localStorage.clear(), true)`)
	tb.load(tb.url)
	eval[bool](tb, `(() => { const f = document.getElementById('title'); f.value = 'Edited title'; f.dispatchEvent(new Event('change')); return true })()`)
	// Delete and undo with our own keys: Alt+Delete on the focused cell, Alt+U.
	key := func(k string) string {
		return `(document.dispatchEvent(new KeyboardEvent('keydown', {key: '` + k + `', altKey: true, bubbles: true})), true)`
	}
	eval[bool](tb, `(gapbook.api.focusCell('intro'), true)`)
	eval[bool](tb, key("Delete"))
	tb.wait(`!document.getElementById('cell-intro')`)
	// The engine is told (its copy drops the cell), then the cell comes
	// back: the engine must get it again.
	if n := eval[int](tb, `gapbook.api.ask('show').then(r => r.cells.length)`); n != 3 {
		t.Errorf("the engine has %d cells after the delete, want 3", n)
	}
	eval[bool](tb, key("u"))
	tb.wait(`!!document.getElementById('cell-intro') && document.querySelectorAll('.cell')[0].dataset.cell === 'intro'`)
	if got := eval[string](tb, `gapbook.api.ask('show').then(r => r.cells.map(c => c.id).join(','), e => 'error: ' + e.message)`); !strings.HasPrefix(got, "intro,") {
		t.Errorf("the engine's cells after undo: %s", got)
	}

	// The saved file is a notebook that loads losslessly, results included.
	saved := eval[string](tb, `gapbook.api.docText()`)
	nb, err := notebook.Load([]byte(saved))
	if err != nil {
		t.Fatalf("the page saved a file that does not load: %v", err)
	}
	if nb.Title != "Edited title" || len(nb.Cells) != 4 || nb.Cells[1].Saved == nil {
		t.Fatalf("saved file: title %q, %d cells, results saved: %v", nb.Title, len(nb.Cells), nb.Cells[1].Saved != nil)
	}

	// The page's "Standalone page" asks the server to assemble the file.
	if page := eval[string](tb, `fetch('standalone', {method: 'POST', body: gapbook.api.docText()}).then(r => r.text())`); !strings.Contains(page, `data-mode="standalone"`) || !strings.Contains(page, "Edited title") {
		t.Errorf("the standalone page made by the server: %.200s", page)
	}

	// Reload: the autosave brings the edit back.
	tb.wait(`(JSON.parse(localStorage.getItem('gapbook.autosave') || '{}').doc || '').includes('Edited title')`)
	tb.load(tb.url)
	if got := eval[string](tb, `document.getElementById('title').value`); got != "Edited title" {
		t.Errorf("after reload the title is %q; the autosave was not restored", got)
	}
	if n := eval[string](tb, `document.getElementById('restored').textContent`); !strings.Contains(n, "Restored") {
		t.Errorf("no word about the restore; notice %q", n)
	}

	// Share link round trip: a fresh profile state opens the same notebook.
	eval[bool](tb, `gapbook.api.shareLink().then(() => true)`)
	link := eval[string](tb, `gapbook.lastShare`)
	if !strings.Contains(link, "#nb=") {
		t.Fatalf("share link %q carries no notebook", link)
	}
	eval[bool](tb, `(localStorage.clear(), true)`)
	tb.do(chromedp.Navigate("about:blank"))
	tb.load(link)
	got := eval[string](tb, `gapbook.api.docText()`)
	nb2, err := notebook.Load([]byte(got))
	if err != nil {
		t.Fatal(err)
	}
	a, _ := notebook.Save(nb)
	b, _ := notebook.Save(nb2)
	if nb2.Title != "Edited title" || !bytes.Equal(stripResults(t, a), stripResults(t, b)) {
		t.Errorf("the shared notebook differs:\n%s\nwant\n%s", b, a)
	}
	compareWithNative(t, tb, "testdata/study.gapbook")
	tb.screenshot("shared-link")
}

// stripResults removes what a recomputation may rewrite (results, history).
func stripResults(t testing.TB, doc []byte) []byte {
	var m map[string]any
	if err := json.Unmarshal(doc, &m); err != nil {
		t.Fatal(err)
	}
	delete(m, "history")
	m["title"] = ""
	for _, c := range m["cells"].([]any) {
		delete(c.(map[string]any), "results")
	}
	b, _ := json.Marshal(m)
	return b
}

func TestStandaloneFromDisk(t *testing.T) {
	for _, c := range []struct {
		path  string
		cells int
	}{{"testdata/study.gapbook", 4}, {"../examples/default.gapbook", -1}} {
		t.Run(filepath.Base(c.path), func(t *testing.T) {
			assets := suite(t)
			doc := readFile(t, c.path)
			page, err := web.Export(context.Background(), doc, assets)
			if err != nil {
				t.Fatal(err)
			}
			want := c.cells
			if want < 0 {
				nb, _ := notebook.Load(doc)
				want = len(nb.Cells)
			}
			path := filepath.Join(t.TempDir(), "page.html")
			if err := os.WriteFile(path, page, 0o644); err != nil {
				t.Fatal(err)
			}
			t.Logf("standalone page: %d bytes", len(page))
			tb := openTab(t, doc)
			tb.load("file://" + path)
			yes := eval[string](tb, `document.getElementById('repro-summary').dataset.yes`)
			total := eval[string](tb, `document.getElementById('repro-summary').dataset.total`)
			compareWithNative(t, tb, c.path)
			tb.screenshot("standalone-" + strings.TrimSuffix(filepath.Base(c.path), ".gapbook"))
			if yes != total || total != strconv.Itoa(want) {
				t.Errorf("reproduced %s of %s saved results, want %d of %d; differences: %s", yes, total, want, want,
					eval[string](tb, `JSON.stringify([...gapbook.views.values()].filter(v => v.reproduced !== 'yes').map(v => [v.id, v.reproduced, v.differences]))`))
			}
		})
	}
}

func TestHostileNotebookRunsNoScript(t *testing.T) {
	tb := openTab(t, readFile(t, "testdata/hostile.gapbook"))
	tb.load(tb.url)
	tb.wait(`!!document.querySelector('#cell-bad .cell-error')`)
	if p := eval[any](tb, `window.pwned`); p != nil {
		t.Errorf("a script from the notebook ran: window.pwned = %v", p)
	}
	if n := tb.dialogs.Load(); n > 0 {
		t.Errorf("%d dialogs opened", n)
	}
	checks := map[string]string{
		`document.querySelectorAll('#cells script, #cells iframe, #cells [onerror], #cells [onload], #cells [onclick], #cells [onmouseover]').length`: "0",
		`document.querySelectorAll('#cells a[href^="javascript"], #cells [href*="javascript:"]').length`:                                              "0",
		`String(document.getElementById('title').value.includes('<script>'))`:                                                                         "true",
	}
	for js, want := range checks {
		if got := fmt.Sprint(eval[any](tb, js)); got != want {
			t.Errorf("%s = %s, want %s", js, got, want)
		}
	}
	errs := eval[string](tb, `document.getElementById('cells').textContent`)
	for _, want := range []string{"want a number > 0", "unknown kind", "needs cell bad"} {
		if !strings.Contains(errs, want) {
			t.Errorf("no clear error %q on the page", want)
		}
	}
	tb.screenshot("hostile")

	// Ids that are not ids: the notebook is refused with a message.
	tb2 := openTab(t, readFile(t, "testdata/badids.gapbook"))
	tb2.do(chromedp.Navigate(tb2.url))
	tb2.wait(`document.getElementById('notice').textContent.includes('cells[0].id')`)
	if p := eval[any](tb2, `window.pwned`); p != nil || tb2.dialogs.Load() > 0 {
		t.Errorf("a script ran from a bad id")
	}
	tb2.screenshot("hostile-ids")
}

func TestCancelStopsAndPageStaysUsable(t *testing.T) {
	tb := openTab(t, readFile(t, "testdata/stall.gapbook"))
	tb.do(chromedp.Navigate(tb.url))
	tb.wait(`document.getElementById('cell-long')?.dataset.status === 'running' && !document.querySelector('#cell-long .bar').hidden`)
	time.Sleep(300 * time.Millisecond) // let the engine get deep into the loop
	tb.screenshot("cancel-running")
	start := time.Now()
	tb.do(chromedp.Click(chromedp.ID("stop")))
	tb.wait(`document.getElementById('cell-long').dataset.status !== 'running' && document.getElementById('stop').disabled`)
	stopped := time.Since(start)
	// The page is usable at once: a fresh engine computes another cell.
	eval[bool](tb, `(gapbook.api.runCells(['quick']), true)`)
	tb.wait(`document.getElementById('cell-quick').dataset.status === 'ok'`)
	usable := time.Since(start)
	t.Logf("stop took %v; the next result came %v after the click", stopped, usable)
	if st := tb.statuses()["long"]; st == "ok" {
		t.Errorf("the long cell finished (%s) instead of being stopped", st)
	}
	if n := eval[string](tb, `document.getElementById('notice').textContent`); !strings.Contains(n, "Stopped") && !strings.Contains(n, "Computed") {
		t.Errorf("notice after stop: %q", n)
	}
	tb.screenshot("cancel-stopped")
}

func TestEngineCrashKeepsNotebook(t *testing.T) {
	tb := openTab(t, readFile(t, "testdata/halt.gapbook"))
	tb.do(chromedp.Navigate(tb.url))
	tb.wait(`document.getElementById('notice')?.textContent.includes('fresh engine')`)
	tb.wait(`!document.body.classList.contains('busy')`)
	if st := tb.statuses()["boom"]; st != "error" {
		t.Errorf("the cell that ended the engine is %q, want error", st)
	}
	// The notebook is intact and the fresh engine computes.
	eval[bool](tb, `(gapbook.api.runCells(['quick']), true)`)
	tb.wait(`document.getElementById('cell-quick').dataset.status === 'ok'`)
	if n := eval[int](tb, `gapbook.doc.cells.length`); n != 2 {
		t.Errorf("after the crash the notebook has %d cells, want 2", n)
	}
	tb.screenshot("engine-crash")
}

func TestRunsPanelCompares(t *testing.T) {
	tb := openTab(t, readFile(t, "testdata/study.gapbook"))
	tb.load(tb.url)
	eval[bool](tb, `(() => { document.getElementById('series-cell').value = 'base'; gapbook.api.fillSeriesInputs();
		document.getElementById('series-input').value = 'k';
		document.getElementById('series-values').value = '1, 2, 3';
		document.getElementById('series-form').requestSubmit(); return true })()`)
	tb.wait(`document.querySelectorAll('.run-pick').length === 3 && !document.body.classList.contains('busy')`)
	eval[bool](tb, `(() => { document.querySelectorAll('.run-pick').forEach(b => b.checked = true);
		document.getElementById('cmp-table').value = 'base/conv';
		document.getElementById('cmp-x').value = 'h'; document.getElementById('cmp-y').value = 'e';
		document.getElementById('compare').click(); return true })()`)
	tb.wait(`!!document.querySelector('#comparison table') && !!document.querySelector('#comparison svg')`)
	// The rate column of the comparison equals each run's exponent k.
	rows := eval[[][]string](tb, `[...document.querySelectorAll('#comparison tbody tr')].map(r => [...r.cells].map(c => c.textContent))`)
	head := eval[[]string](tb, `[...document.querySelectorAll('#comparison thead th')].map(c => c.textContent)`)
	ki, ri := -1, -1
	for j, h := range head {
		switch h {
		case "base.k":
			ki = j
		case "base.rate":
			ri = j
		}
	}
	if len(rows) != 3 || ki < 0 || ri < 0 {
		t.Fatalf("comparison: header %q, %d rows", head, len(rows))
	}
	for _, r := range rows {
		if r[ki] != r[ri] {
			t.Errorf("run %s: rate %s, want the exponent %s", r[0], r[ri], r[ki])
		}
	}
	if n := eval[int](tb, `document.querySelectorAll('#comparison svg polyline, #comparison svg path').length`); n < 3 {
		t.Errorf("the overlay has %d lines, want 3", n)
	}
	tb.screenshot("runs-compare")
}

func TestNarrowScreen(t *testing.T) {
	tb := openTab(t, readFile(t, "testdata/study.gapbook"))
	tb.do(chromedp.EmulateViewport(768, 1024))
	tb.load(tb.url)
	// Inputs and results stack: the results start below the inputs.
	below := eval[bool](tb, `(() => { const c = document.getElementById('cell-base');
		return c.querySelector('.results').getBoundingClientRect().top >= c.querySelector('.inputs').getBoundingClientRect().bottom - 1 })()`)
	if !below {
		t.Error("on a tablet the results are not below the inputs")
	}
	tb.screenshot("tablet")
}

// BenchmarkFirstResults reports the time from navigation to the first
// results of the default study, and the WebAssembly/native time of one
// evaluation of it (engine cache cold in both).
func BenchmarkFirstResults(b *testing.B) {
	path := "../examples/default.gapbook"
	if p := os.Getenv("GAPBOOK_BENCH_FILE"); p != "" {
		path = p
	}
	doc := readFile(b, path)
	for i := 0; i < b.N; i++ {
		tb := openTab(b, doc)
		tb.load(tb.url)
		ms := eval[float64](tb, `gapbook.firstResults`)
		b.ReportMetric(ms, "ms-to-first-results")
		b.Logf("start stages (ms since navigation): %s", eval[string](tb, `JSON.stringify(gapbook.marks)`))
		// One cold evaluation in the worker (after a warm-up), against native.
		wasm := eval[float64](tb, `(async () => { const a = gapbook.api; await a.ask('run', {doc: a.docText()}); a.restartWorker(); await gapbook.ready;
			const t = performance.now(); await a.ask('run', {doc: a.docText()}); return performance.now() - t })()`)
		nb, _ := notebook.Load(doc)
		start := time.Now()
		notebook.NewEngine().Evaluate(context.Background(), nb, notebook.Options{})
		nat := float64(time.Since(start).Microseconds()) / 1000
		b.ReportMetric(wasm, "ms-wasm-eval")
		b.ReportMetric(nat, "ms-native-eval")
		if nat > 0 {
			b.ReportMetric(wasm/nat, "wasm/native")
		}
	}
}

// The members of a sweep are spread over the main engine and a helper
// worker; the results equal those of the main engine alone, bit for bit.
func TestSweepMembersOnPool(t *testing.T) {
	doc := readFile(t, "testdata/members.gapbook")
	results := map[int]string{}
	for _, w := range []int{1, 2} {
		tb := openTab(t, doc)
		tb.load(fmt.Sprintf("%s?workers=%d", tb.url, w))
		if st := tb.statuses()["sw"]; st != "ok" {
			t.Fatalf("%d workers: the sweep is %s", w, st)
		}
		n := eval[string](tb, `document.getElementById('notice').textContent`)
		if spread := strings.Contains(n, "on 2 engines"); spread != (w == 2) {
			t.Errorf("%d workers: notice %q", w, n)
		}
		results[w] = eval[string](tb, `JSON.stringify(gapbook.doc.cells.find(c => c.id === 'sw').results)`)
		if w == 2 {
			tb.screenshot("members-pool")
		}
	}
	if results[1] != results[2] || !strings.Contains(results[1], "b.majorant") {
		t.Errorf("the sweep's results with one engine and with two differ:\n%s\n%s", results[1], results[2])
	}
}

// A stop keeps the members finished so far: the next run computes only
// the others.
func TestStopKeepsFinishedMembers(t *testing.T) {
	doc := bytes.Replace(readFile(t, "testdata/members.gapbook"), []byte(`"cells": 8}`), []byte(`"cells": 32}`), 1)
	tb := openTab(t, doc)
	tb.do(chromedp.Navigate(tb.url + "?workers=1"))
	tb.waitFor(`gapbook.running && (gapbook.running.members.get('sw') || 0) >= 2`, 3*time.Minute)
	tb.do(chromedp.Click(chromedp.ID("stop")))
	tb.wait(`document.getElementById('stop').disabled`)
	n := eval[string](tb, `document.getElementById('notice').textContent`)
	var kept int
	if m := regexp.MustCompile(`(\d+) finished members? (is|are) kept`).FindStringSubmatch(n); m != nil {
		kept, _ = strconv.Atoi(m[1])
	}
	if kept < 2 || kept >= 8 {
		t.Fatalf("notice after the stop: %q (kept %d)", n, kept)
	}
	computed := eval[float64](tb, `gapbook.api.runCells(null).then(r => r.computed)`)
	if int(computed) != 8-kept {
		t.Errorf("after keeping %d members the run computed %v, want %d", kept, computed, 8-kept)
	}
	if st := tb.statuses()["sw"]; st != "ok" {
		t.Errorf("the sweep is %s after the second run", st)
	}
}

// BenchmarkPageSweepWorkers times a 32-member sweep (the exponent from 1.5
// to 4.6 through mesh, solve and bound on the L-shape, as
// BenchmarkSweepWorkers natively) in the page with one engine and with two
// (the main one and a helper worker), and reports the speed-up (target
// ≥ 1.6 on two cores). Each page first computes the study once (start-up,
// helpers started); the timed run sweeps new values, so no member is
// cached.
func BenchmarkPageSweepWorkers(b *testing.B) {
	list := func(from float64) string {
		v := make([]string, 32)
		for i := range v {
			v[i] = strconv.FormatFloat(from+0.1*float64(i), 'g', -1, 64)
		}
		return "[" + strings.Join(v, ", ") + "]"
	}
	doc := []byte(`{"gapbook": 2, "title": "32 members", "cells": [
 {"id": "p", "kind": "problem", "inputs": {"domain": "L-shape", "p": 3}},
 {"id": "m", "kind": "mesh", "inputs": {"problem": "p", "cells": 16}},
 {"id": "s", "kind": "solve", "inputs": {"mesh": "m"}},
 {"id": "b", "kind": "bound", "inputs": {"solution": "s"}},
 {"id": "sw", "kind": "sweep", "inputs": {"cell": "p", "input": "p", "values": ` + list(1.5) + `, "through": "b"}}]}`)
	// sweep runs the whole study with the sweep over new values (no member
	// cached) and returns how long it took in ms.
	sweep := func(tb *tab, values string) float64 {
		return eval[float64](tb, `(async () => { gapbook.doc.cells.find(c => c.id === 'sw').inputs.values = `+values+`;
			const t = performance.now(); const r = await gapbook.api.runCells(null); if (!r || r.computed === undefined) throw new Error('the run failed');
			return performance.now() - t })()`)
	}
	timed := func(workers int) float64 {
		tb := openTab(b, doc)
		tb.load(fmt.Sprintf("%s?workers=%d", tb.url, workers))
		// A second sweep first: the browser compiles the engine's hot code
		// with its optimising compiler during the first minute of work,
		// and that compilation competes with the engines for the cores.
		sweep(tb, list(1.52))
		ms := sweep(tb, list(1.55))
		if st := tb.statuses()["sw"]; st != "ok" {
			b.Fatalf("%d workers: the sweep is %s", workers, st)
		}
		b.Logf("%d workers: %s; shares: %s", workers, eval[string](tb, `document.getElementById('notice').textContent`), eval[string](tb, `JSON.stringify(gapbook.lastSpread || null)`))
		return ms
	}
	var one, two float64
	for b.Loop() {
		one, two = timed(1), timed(2)
	}
	b.ReportMetric(one/1000, "s-1-worker")
	b.ReportMetric(two/1000, "s-2-workers")
	b.ReportMetric(one/two, "speedup")
	b.Logf("32 members in the page: %.2f s with one engine, %.2f s with two", one/1000, two/1000)
}

// A mesh file dropped on an import cell is stored in the study and
// imported; the bound cell then bounds it.
func TestDropMeshFile(t *testing.T) {
	raw := readFile(t, "../meshfile/testdata/tri-zlib.vtu")
	doc := []byte(`{"gapbook": 2, "title": "an imported field", "cells": [
 {"id": "p", "kind": "problem", "inputs": {"domain": "rectangle", "x_max": 2, "p": 2, "u_D": "x^2 + 3*y + 1", "f": "-2"}},
 {"id": "i", "kind": "import", "inputs": {"problem": "p", "array": "u"}},
 {"id": "b", "kind": "bound", "inputs": {"solution": "i"}}]}`)
	tb := openTab(t, doc)
	tb.load(tb.url)
	if st := tb.statuses()["i"]; st != "error" {
		t.Errorf("an import without a file is %s, want failed", st)
	}
	eval[bool](tb, `(() => { const bytes = Uint8Array.from(atob('`+base64.StdEncoding.EncodeToString(raw)+`'), (c) => c.charCodeAt(0));
		const dt = new DataTransfer(); dt.items.add(new File([bytes], 'tri-zlib.vtu'));
		document.querySelector('#cell-i .file-drop').dispatchEvent(new DragEvent('drop', { dataTransfer: dt, bubbles: true, cancelable: true }));
		return true })()`)
	tb.wait(`!!gapbook.doc.cells.find(c => c.id === 'i').inputs.data`)
	if name := eval[string](tb, `gapbook.doc.cells.find(c => c.id === 'i').inputs.file`); name != "tri-zlib.vtu" {
		t.Errorf("the file input is %q", name)
	}
	eval[bool](tb, `(gapbook.api.runCells(null), true)`)
	tb.wait(`document.getElementById('cell-b').dataset.status === 'ok' && !document.body.classList.contains('busy')`)
	var nodes string
	for _, v := range tb.values() {
		if v.Cell == "i" && v.Name == "nodes" {
			nodes = v.Value
		}
	}
	if nodes != "20" {
		t.Errorf("the import shows %q nodes, want 20", nodes)
	}
	tb.screenshot("import-dropped")
}

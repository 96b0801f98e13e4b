// Command benchtable prints the table of BenchmarkEllipticSolve results:
// sizes, Newton and CG iterations, time, time per unknown and matvecs,
// natively and under WebAssembly, with the ratio WebAssembly / native.
//
// Usage: benchtable native.txt wasm.txt (outputs of go test -bench).
package main

import (
	"bufio"
	"fmt"
	"os"
	"sort"
	"strconv"
	"strings"
)

type row struct {
	ns      float64
	metrics map[string]float64
}

func read(path string) (map[string]row, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	out := map[string]row{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		fs := strings.Fields(sc.Text())
		if len(fs) < 4 || !strings.HasPrefix(fs[0], "BenchmarkEllipticSolve/") {
			continue
		}
		name := strings.TrimPrefix(fs[0], "BenchmarkEllipticSolve/")
		if i := strings.LastIndex(name, "-"); i > 0 {
			name = name[:i]
		}
		r := row{metrics: map[string]float64{}}
		for i := 2; i+1 < len(fs); i += 2 {
			v, err := strconv.ParseFloat(fs[i], 64)
			if err != nil {
				continue
			}
			if fs[i+1] == "ns/op" {
				r.ns = v
			} else {
				r.metrics[fs[i+1]] = v
			}
		}
		out[name] = r
	}
	return out, sc.Err()
}

func main() {
	if len(os.Args) != 3 {
		fmt.Fprintln(os.Stderr, "usage: benchtable native.txt wasm.txt")
		os.Exit(2)
	}
	nat, err := read(os.Args[1])
	if err != nil {
		fmt.Fprintln(os.Stderr, "benchtable:", err)
		os.Exit(1)
	}
	wasm, err := read(os.Args[2])
	if err != nil {
		fmt.Fprintln(os.Stderr, "benchtable:", err)
		os.Exit(1)
	}
	var names []string
	for k := range nat {
		names = append(names, k)
	}
	sort.Slice(names, func(i, j int) bool {
		a, b := nat[names[i]], nat[names[j]]
		if pa, pb := strings.Split(names[i], "/")[0], strings.Split(names[j], "/")[0]; pa != pb {
			return pa < pb
		}
		return a.metrics["dofs"] < b.metrics["dofs"]
	})
	fmt.Printf("%-14s %8s %6s %5s | %9s %8s %8s | %9s %8s %8s | %6s\n",
		"case", "dofs", "newton", "cg", "native s", "µs/dof", "matvecs", "wasm s", "µs/dof", "matvecs", "ratio")
	for _, k := range names {
		n, w := nat[k], wasm[k]
		d := n.metrics["dofs"]
		ratio, ws := "-", "-"
		wper, wmv := "-", "-"
		if w.ns > 0 {
			ratio = fmt.Sprintf("%.2f", w.ns/n.ns)
			ws = fmt.Sprintf("%.3f", w.ns/1e9)
			wper = fmt.Sprintf("%.2f", w.ns/1e3/d)
			wmv = fmt.Sprintf("%.0f", w.metrics["matvecs"])
		}
		fmt.Printf("%-14s %8.0f %6.0f %5.0f | %9.3f %8.2f %8.0f | %9s %8s %8s | %6s\n",
			k, d, n.metrics["newton"], n.metrics["cg"], n.ns/1e9, n.ns/1e3/d, n.metrics["matvecs"], ws, wper, wmv, ratio)
	}
}

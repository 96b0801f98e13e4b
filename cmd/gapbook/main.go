// Command gapbook evaluates gapbook notebooks headless and serves the
// browser notebook. It wires packages together and holds no logic of its own.
package main

import (
	"context"
	"errors"
	"fmt"
	"net"
	"net/http"
	"os"
	"os/exec"
	"os/signal"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"gapbook/cmd/gapbook/batch"
	"gapbook/examples"
	"gapbook/notebook"
	"gapbook/web"
)

const usage = `gapbook: guaranteed error bounds for nonlinear diffusion, as a notebook

usage:
  gapbook run FILE [--json] [--fields] [--workers N] [--report out.html] [--export DIR]
                                                  evaluate a notebook (sweep members on N
                                                  workers, default all cores); --fields adds tables
                                                  and fields to the JSON; --export writes
                                                  tables (CSV), plots (SVG), fields (VTU)
  gapbook serve [--addr 127.0.0.1:PORT] [--public] [FILE]
                                                  serve the browser notebook; --public allows
                                                  a non-loopback address (no authentication)
  gapbook run FILE --members K/N --out part-K.json
                                                  compute share K of N of the study's members
  gapbook merge FILE part-*.json --out merged.gapbook
                                                  fold the shares into the study, with results
  gapbook slurm FILE --shares N [--dir D] [--partition P] [--time T] [--submit]
                                                  write (and submit) a Slurm job array of the
                                                  shares and the merge job after it
  gapbook export FILE --standalone out.html       write a single-file page
`

func main() {
	if len(os.Args) < 2 {
		fmt.Fprint(os.Stderr, usage)
		os.Exit(2)
	}
	switch os.Args[1] {
	case "merge":
		os.Exit(merge(os.Args[2:]))
	case "slurm":
		os.Exit(slurm(os.Args[2:]))
	case "-h", "--help", "help":
		fmt.Print(usage)
	case "run":
		os.Exit(run(os.Args[2:]))
	case "serve":
		os.Exit(serve(os.Args[2:]))
	case "export":
		os.Exit(export(os.Args[2:]))
	default:
		fmt.Fprintf(os.Stderr, "gapbook %s: not available yet in this build\n", os.Args[1])
		os.Exit(2)
	}
}

// run parses `gapbook run` arguments (flags before or after FILE) and
// returns the exit status: 0 all cells ok, 1 a cell failed, 2 bad usage or
// unreadable file.
func run(args []string) int {
	var file, members, out string
	o := batch.Options{Stdout: os.Stdout, Stderr: os.Stderr}
	for i := 0; i < len(args); i++ {
		switch a := args[i]; a {
		case "--json", "-json":
			o.JSON = true
		case "--fields", "-fields":
			o.JSON, o.Fields = true, true
		case "--members", "-members", "--out", "-out":
			if i+1 >= len(args) {
				fmt.Fprintf(os.Stderr, "gapbook run: %s needs a value\n", a)
				return 2
			}
			i++
			if strings.TrimLeft(a, "-") == "members" {
				members = args[i]
			} else {
				out = args[i]
			}
		case "--workers", "-workers":
			if i+1 >= len(args) {
				fmt.Fprintln(os.Stderr, "gapbook run: --workers needs a number of workers, for example 2")
				return 2
			}
			i++
			n, err := strconv.Atoi(args[i])
			if err != nil || n < 1 {
				fmt.Fprintf(os.Stderr, "gapbook run: --workers %q: want a whole number ≥ 1\n", args[i])
				return 2
			}
			o.Workers = n
		case "--report", "-report":
			if i+1 >= len(args) {
				fmt.Fprintln(os.Stderr, "gapbook run: --report needs a file name")
				return 2
			}
			i++
			o.Report = args[i]
		case "--export", "-export":
			if i+1 >= len(args) {
				fmt.Fprintln(os.Stderr, "gapbook run: --export needs a directory")
				return 2
			}
			i++
			o.Export = args[i]
		default:
			if len(a) > 0 && a[0] == '-' || file != "" {
				fmt.Fprintf(os.Stderr, "gapbook run: unexpected argument %q\n%s", a, usage)
				return 2
			}
			file = a
		}
	}
	if file == "" {
		fmt.Fprintf(os.Stderr, "gapbook run: which file?\n%s", usage)
		return 2
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	if members != "" || out != "" {
		k, n, err := batch.ParseShare(members)
		switch {
		case err != nil:
			fmt.Fprintf(os.Stderr, "gapbook run: --members: %v\n", err)
			return 2
		case out == "":
			fmt.Fprintln(os.Stderr, "gapbook run: --members needs --out part.json, the file its share is written to")
			return 2
		case o.JSON || o.Report != "" || o.Export != "":
			fmt.Fprintln(os.Stderr, "gapbook run: a share (--members) writes only its part; merge the parts with gapbook merge, then report")
			return 2
		}
		part, err := batch.RunShare(ctx, file, k, n, o.Workers, out)
		if err != nil {
			fmt.Fprintf(os.Stderr, "gapbook run: %v\n", err)
			return 2
		}
		fmt.Fprintf(os.Stderr, "share %d/%d: %d members written to %s\n", k, n, len(part.Members), out)
		return 0
	}
	_, ok, err := batch.Run(ctx, file, o)
	if err != nil {
		fmt.Fprintf(os.Stderr, "gapbook run: %v\n", err)
		return 2
	}
	if !ok {
		return 1
	}
	return 0
}

// merge parses `gapbook merge FILE PART... --out merged.gapbook` and folds
// the shares of a study into it.
func merge(args []string) int {
	var file, out string
	var parts []string
	for i := 0; i < len(args); i++ {
		switch a := args[i]; {
		case a == "--out" || a == "-out":
			if i+1 >= len(args) {
				fmt.Fprintln(os.Stderr, "gapbook merge: --out needs the file to write the merged study to")
				return 2
			}
			i++
			out = args[i]
		case strings.HasPrefix(a, "-"):
			fmt.Fprintf(os.Stderr, "gapbook merge: unexpected argument %q\n%s", a, usage)
			return 2
		case file == "":
			file = a
		default:
			parts = append(parts, a)
		}
	}
	if file == "" || len(parts) == 0 || out == "" {
		fmt.Fprintf(os.Stderr, "gapbook merge: want the study, its parts and --out\n%s", usage)
		return 2
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	doc, ev, err := batch.Merge(ctx, file, parts)
	if err != nil {
		fmt.Fprintf(os.Stderr, "gapbook merge: %v\n", err)
		return 2
	}
	if err := batch.WriteFileAtomic(out, doc); err != nil {
		fmt.Fprintf(os.Stderr, "gapbook merge: %v\n", err)
		return 2
	}
	failed := 0
	for _, o := range ev.Cells {
		if o.Status != "ok" {
			failed++
		}
	}
	fmt.Fprintf(os.Stderr, "gapbook merge: %d parts merged into %s (%d cells, %d not ok)\n", len(parts), out, len(ev.Cells), failed)
	if failed > 0 {
		return 1
	}
	return 0
}

// slurm parses `gapbook slurm FILE --shares N [--dir D] [--partition P]
// [--time T] [--workers W] [--submit]`, writes the job-array script and the
// merge script into D and, with --submit, hands them to sbatch, the merge
// to run after every share succeeded.
func slurm(args []string) int {
	o := batch.SlurmOptions{}
	var file, dir string
	submit := false
	for i := 0; i < len(args); i++ {
		a := args[i]
		val := func() (string, bool) {
			if i+1 >= len(args) {
				fmt.Fprintf(os.Stderr, "gapbook slurm: %s needs a value\n", a)
				return "", false
			}
			i++
			return args[i], true
		}
		var ok bool
		switch a {
		case "--submit":
			submit = true
			continue
		case "--shares", "--workers":
			var v string
			if v, ok = val(); !ok {
				return 2
			}
			n, err := strconv.Atoi(v)
			if err != nil || n < 1 {
				fmt.Fprintf(os.Stderr, "gapbook slurm: %s %q: want a whole number ≥ 1\n", a, v)
				return 2
			}
			if a == "--shares" {
				o.Shares = n
			} else {
				o.Workers = n
			}
		case "--dir":
			if dir, ok = val(); !ok {
				return 2
			}
		case "--partition":
			if o.Partition, ok = val(); !ok {
				return 2
			}
		case "--time":
			if o.Time, ok = val(); !ok {
				return 2
			}
		default:
			if strings.HasPrefix(a, "-") || file != "" {
				fmt.Fprintf(os.Stderr, "gapbook slurm: unexpected argument %q\n%s", a, usage)
				return 2
			}
			file = a
		}
	}
	if file == "" || o.Shares == 0 {
		fmt.Fprintf(os.Stderr, "gapbook slurm: want the study and --shares N\n%s", usage)
		return 2
	}
	if _, err := os.ReadFile(file); err != nil {
		fmt.Fprintf(os.Stderr, "gapbook slurm: %v\n", err)
		return 2
	}
	if dir == "" {
		dir = strings.TrimSuffix(file, filepath.Ext(file)) + "-slurm"
	}
	var err error
	if o.Study, err = filepath.Abs(file); err == nil {
		if o.Dir, err = filepath.Abs(dir); err == nil {
			o.Gapbook, err = os.Executable()
		}
	}
	if err != nil {
		fmt.Fprintf(os.Stderr, "gapbook slurm: %v\n", err)
		return 2
	}
	array, mergeScript, err := batch.SlurmScripts(o)
	if err == nil {
		err = os.MkdirAll(filepath.Join(o.Dir, "logs"), 0o755)
	}
	shares, merges := filepath.Join(o.Dir, "shares.sbatch"), filepath.Join(o.Dir, "merge.sbatch")
	if err == nil {
		err = batch.WriteFileAtomic(shares, []byte(array))
	}
	if err == nil {
		err = batch.WriteFileAtomic(merges, []byte(mergeScript))
	}
	if err != nil {
		fmt.Fprintf(os.Stderr, "gapbook slurm: %v\n", err)
		return 2
	}
	fmt.Fprintf(os.Stderr, "gapbook slurm: wrote %s (%d array tasks) and %s\n", shares, o.Shares, merges)
	if !submit {
		fmt.Fprintf(os.Stderr, "submit with: id=$(sbatch --parsable %s) && sbatch --dependency=afterok:$id %s\n", shares, merges)
		return 0
	}
	id, err := exec.Command("sbatch", "--parsable", shares).Output()
	if err != nil {
		fmt.Fprintf(os.Stderr, "gapbook slurm: sbatch %s: %v\n", shares, err)
		return 2
	}
	job := strings.TrimSpace(strings.Split(string(id), ";")[0])
	mid, err := exec.Command("sbatch", "--parsable", "--dependency=afterok:"+job, merges).Output()
	if err != nil {
		fmt.Fprintf(os.Stderr, "gapbook slurm: sbatch %s: %v\n", merges, err)
		return 2
	}
	fmt.Printf("shares job %s, merge job %s; the merged study will be %s\n", job, strings.TrimSpace(string(mid)), filepath.Join(o.Dir, "merged.gapbook"))
	return 0
}

// serve parses `gapbook serve [--addr HOST:PORT] [FILE]` and serves the
// page until interrupted; without FILE it serves the default study.
func serve(args []string) int {
	addr, file, public := "127.0.0.1:8787", "", false
	for i := 0; i < len(args); i++ {
		switch a := args[i]; {
		case a == "--public":
			public = true
		case a == "--addr" || a == "-addr":
			if i+1 >= len(args) {
				fmt.Fprintln(os.Stderr, "gapbook serve: --addr needs HOST:PORT, for example 127.0.0.1:8787")
				return 2
			}
			i++
			addr = args[i]
		case strings.HasPrefix(a, "--addr="):
			addr = strings.TrimPrefix(a, "--addr=")
		case strings.HasPrefix(a, "-") || file != "":
			fmt.Fprintf(os.Stderr, "gapbook serve: unexpected argument %q\n%s", a, usage)
			return 2
		default:
			file = a
		}
	}
	doc := examples.Default
	if file != "" {
		b, err := os.ReadFile(file)
		if err != nil {
			fmt.Fprintf(os.Stderr, "gapbook serve: %v\n", err)
			return 2
		}
		if nb, err := notebook.Load(b); nb == nil {
			fmt.Fprintf(os.Stderr, "gapbook serve: %s:\n%v\n", file, err)
			return 2
		}
		doc = b
	}
	if err := web.Missing(web.Assets()); err != nil {
		fmt.Fprintf(os.Stderr, "gapbook serve: %v\nThe page will say so too.\n", err)
	}
	host, _, err := net.SplitHostPort(addr)
	if err != nil {
		fmt.Fprintf(os.Stderr, "gapbook serve: --addr %q: %v; want HOST:PORT, for example 127.0.0.1:8787\n", addr, err)
		return 2
	}
	var hosts []string
	if !web.Loopback(host) {
		if !public {
			fmt.Fprintf(os.Stderr, "gapbook serve: %s is not a loopback address: the server has no authentication, and anyone who reaches it could read and run your studies.\nServe on 127.0.0.1 (the default), or add --public to serve on %s anyway.\n", host, addr)
			return 2
		}
		fmt.Fprintf(os.Stderr, "gapbook serve: WARNING: serving on %s, which other machines may reach; the server has no authentication.\n", addr)
		hosts = append(hosts, host)
	}
	ln, err := net.Listen("tcp", addr)
	if err != nil {
		fmt.Fprintf(os.Stderr, "gapbook serve: %v\n", err)
		return 2
	}
	name := "the default study"
	if file != "" {
		name = filepath.Base(file)
	}
	fmt.Printf("gapbook: serving %s at http://%s/  (Ctrl+C stops)\n", name, ln.Addr())
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	srv := &http.Server{Handler: web.Handler(web.Options{Notebook: doc, Hosts: hosts}), ReadHeaderTimeout: 10 * time.Second}
	go func() { <-ctx.Done(); srv.Close() }()
	if err := srv.Serve(ln); err != nil && !errors.Is(err, http.ErrServerClosed) {
		fmt.Fprintf(os.Stderr, "gapbook serve: %v\n", err)
		return 1
	}
	return 0
}

// export parses `gapbook export FILE --standalone out.html` and writes the
// single-file page with results computed here, for the page to reproduce.
func export(args []string) int {
	var file, out string
	for i := 0; i < len(args); i++ {
		switch a := args[i]; {
		case a == "--standalone" || a == "-standalone":
			if i+1 >= len(args) {
				fmt.Fprintln(os.Stderr, "gapbook export: --standalone needs the name of the page to write, for example out.html")
				return 2
			}
			i++
			out = args[i]
		case strings.HasPrefix(a, "-") || file != "":
			fmt.Fprintf(os.Stderr, "gapbook export: unexpected argument %q\n%s", a, usage)
			return 2
		default:
			file = a
		}
	}
	if file == "" || out == "" {
		fmt.Fprintf(os.Stderr, "gapbook export: want FILE --standalone out.html\n%s", usage)
		return 2
	}
	doc, err := os.ReadFile(file)
	if err != nil {
		fmt.Fprintf(os.Stderr, "gapbook export: %v\n", err)
		return 2
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	page, err := web.Export(ctx, doc, web.Assets())
	if err != nil {
		fmt.Fprintf(os.Stderr, "gapbook export: %s: %v\n", file, err)
		return 2
	}
	if err := batch.WriteFileAtomic(out, page); err != nil {
		fmt.Fprintf(os.Stderr, "gapbook export: %v\n", err)
		return 2
	}
	fmt.Fprintf(os.Stderr, "gapbook export: wrote %s (%d bytes); it opens from disk and recomputes offline\n", out, len(page))
	return 0
}

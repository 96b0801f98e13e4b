// Command gapbook evaluates gapbook notebooks headless and serves the
// browser notebook. It wires packages together and holds no logic of its own.
package main

import (
	"context"
	"fmt"
	"os"
	"os/signal"

	"gapbook/notebook"
)

const usage = `gapbook: guaranteed error bounds for nonlinear diffusion, as a notebook

usage:
  gapbook run FILE [--json] [--report out.html]   evaluate a notebook
  gapbook serve [--addr 127.0.0.1:PORT] [FILE]    serve the browser notebook
  gapbook export FILE --standalone out.html       write a single-file page
`

func main() {
	if len(os.Args) < 2 {
		fmt.Fprint(os.Stderr, usage)
		os.Exit(2)
	}
	switch os.Args[1] {
	case "-h", "--help", "help":
		fmt.Print(usage)
	case "run":
		os.Exit(run(os.Args[2:]))
	default:
		fmt.Fprintf(os.Stderr, "gapbook %s: not available yet in this build\n", os.Args[1])
		os.Exit(2)
	}
}

// run parses `gapbook run` arguments (flags before or after FILE) and
// returns the exit status: 0 all cells ok, 1 a cell failed, 2 bad usage or
// unreadable file.
func run(args []string) int {
	var file string
	o := notebook.BatchOptions{Stdout: os.Stdout, Stderr: os.Stderr}
	for i := 0; i < len(args); i++ {
		switch a := args[i]; a {
		case "--json", "-json":
			o.JSON = true
		case "--report", "-report":
			if i+1 >= len(args) {
				fmt.Fprintln(os.Stderr, "gapbook run: --report needs a file name")
				return 2
			}
			i++
			o.Report = args[i]
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
	_, ok, err := notebook.RunFile(ctx, file, o)
	if err != nil {
		fmt.Fprintf(os.Stderr, "gapbook run: %v\n", err)
		return 2
	}
	if !ok {
		return 1
	}
	return 0
}

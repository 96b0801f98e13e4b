// Command gapbook evaluates gapbook notebooks headless and serves the
// browser notebook. It wires packages together and holds no logic of its own.
package main

import (
	"fmt"
	"os"
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
	default:
		fmt.Fprintf(os.Stderr, "gapbook %s: not available yet in this build\n", os.Args[1])
		os.Exit(2)
	}
}

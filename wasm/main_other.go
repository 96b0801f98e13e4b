//go:build !js

package main

import (
	"fmt"
	"os"
)

func main() {
	fmt.Fprintln(os.Stderr, "wasm: this program runs in a browser worker; build it with GOOS=js GOARCH=wasm go build -o web/static/gapbook.wasm ./wasm")
	os.Exit(2)
}

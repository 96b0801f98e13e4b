//go:build js

package estimate

// cpuSeconds is not available under WebAssembly; benchmarks report 0.
func cpuSeconds() float64 { return 0 }

package convex

import (
	"math/rand/v2"
	"testing"
)

var sinkF float64
var sinkV [2]float64
var sinkH [3]float64

func benchPots() []Potential {
	return []Potential{must(Power(1.5)), must(Power(3)), must(RegPower(1.5, 1e-3))}
}

// BenchmarkGap measures D_G near the graph (the case of converged fluxes).
func BenchmarkGap(b *testing.B) {
	for _, G := range benchPots() {
		xi := [2]float64{0.8, -0.3}
		f := Flux(G, xi)
		eta := [2]float64{f[0] * (1 + 1e-4), f[1]}
		b.Run(G.String(), func(b *testing.B) {
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				sinkF = Gap(G, xi, eta)
			}
		})
	}
}

func BenchmarkFlux(b *testing.B) {
	for _, G := range benchPots() {
		xi := [2]float64{0.8, -0.3}
		b.Run(G.String(), func(b *testing.B) {
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				sinkV = Flux(G, xi)
			}
		})
	}
}

func BenchmarkHessian(b *testing.B) {
	for _, G := range benchPots() {
		xi := [2]float64{0.8, -0.3}
		b.Run(G.String(), func(b *testing.B) {
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				sinkH = Hessian(G, xi, 1e-8)
			}
		})
	}
}

// BenchmarkModulusSampling runs the modulus sampling at 10^6 pairs per
// exponent (the test uses 10^5).
func BenchmarkModulusSampling(b *testing.B) {
	for i := 0; i < b.N; i++ {
		for _, a := range []float64{1.1, 1.5, 3, 10} {
			G := must(Power(a))
			m := G.Modulus()
			rng := newRng(uint64(i))
			for k := 0; k < 1000000; k++ {
				xi, zeta := samplePair(rng)
				if m.Lower(xi, zeta) > Gap(G, xi, Flux(G, zeta))*(1+1e-9)+1e-300 {
					sinkF++
				}
			}
		}
	}
	if sinkF > 0 {
		b.Logf("%g pairs above the bound (beyond the test's rounding allowance)", sinkF)
	}
}

func newRng(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, 1)) }

package expr

import "testing"

// A typical manufactured source term with time dependence.
const benchSource = "2*pi^2*sin(pi*x)*sin(pi*y)*exp(-t) - sin(pi*x)*sin(pi*y)*exp(-t) + (x^2 + y^2)^0.75"

func BenchmarkEval(b *testing.B) {
	f := MustParse(benchSource, xyt...)
	p := []float64{0.3, 0.7, 0.1}
	b.ReportAllocs()
	for b.Loop() {
		f.Eval(p)
	}
}

func BenchmarkEval2(b *testing.B) {
	f := MustParse(benchSource, xyt...)
	p := []float64{0.3, 0.7, 0.1}
	grad, hess := make([]float64, 3), make([]float64, 9)
	b.ReportAllocs()
	for b.Loop() {
		f.Eval2(p, grad, hess)
	}
}

// The same with the Hessian in space only, as a source term needs it.
func BenchmarkEval2First(b *testing.B) {
	f := MustParse(benchSource, xyt...)
	p := []float64{0.3, 0.7, 0.1}
	grad, hess := make([]float64, 3), make([]float64, 4)
	b.ReportAllocs()
	for b.Loop() {
		f.Eval2First(p, grad, hess, 2)
	}
}

// A potential g(t) with g, g′, g″ as Newton needs them at each quadrature point.
func BenchmarkScalar(b *testing.B) {
	f := MustParse("(1 + t^2)^(1.5/2) + abs(t)^3/3", "t")
	b.ReportAllocs()
	for b.Loop() {
		f.Scalar(0.7)
	}
}

func BenchmarkParse(b *testing.B) {
	b.ReportAllocs()
	for b.Loop() {
		MustParse(benchSource, xyt...)
	}
}

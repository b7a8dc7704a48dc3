package dft

import (
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
)

func BenchmarkComputeWaterStandard(b *testing.B) {
	m := water()
	set, _ := basis.Builtin("cc-pvdz")
	mb, _ := basis.Build(set, m, "")
	spec, _ := Level("standard")
	xc, err := NewXC(m, mb, "b3lyp(vwn-rpa)", spec, 2)
	if err != nil {
		b.Fatal(err)
	}
	n := mb.NBasis
	d := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		d.SetSym(i, i, 0.2)
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, _, _, err := xc.Compute(d, d); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkKernelB3LYPUnpolarized(b *testing.B) {
	f, _ := NewFunctional("b3lyp(vwn-rpa)")
	const n = 1000
	rho, sig := make([]float64, n), make([]float64, n)
	for i := range rho {
		rho[i] = 0.001 + float64(i)*0.01
		sig[i] = 0.3 * rho[i]
	}
	e, vr, vs := make([]float64, n), make([]float64, n), make([]float64, n)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		f.EvalUnpolarized(rho, sig, e, vr, vs)
	}
}

func BenchmarkKernelB3LYPPolarized(b *testing.B) {
	f, _ := NewFunctional("b3lyp(vwn-rpa)")
	const n = 1000
	rho, sig := make([]float64, 2*n), make([]float64, 3*n)
	for i := 0; i < n; i++ {
		rho[2*i], rho[2*i+1] = 0.001+float64(i)*0.01, 0.002+float64(i)*0.005
		sig[3*i], sig[3*i+1], sig[3*i+2] = 0.3*rho[2*i], 0.1*rho[2*i], 0.2*rho[2*i+1]
	}
	e, vr, vs := make([]float64, n), make([]float64, 2*n), make([]float64, 3*n)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		f.EvalPolarized(rho, sig, e, vr, vs)
	}
}

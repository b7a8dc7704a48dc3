package dft

import (
	"math"
	"moltrail/engine/molecule"
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

func benzeneMol() *molecule.Molecule {
	var atoms []molecule.Atom
	for _, el := range []struct {
		sym string
		r   float64
	}{{"C", 1.39}, {"H", 1.39 + 1.09}} {
		for k := 0; k < 6; k++ {
			a := float64(k) * math.Pi / 3
			r := el.r * molecule.AngstromBohr
			atoms = append(atoms, molecule.MustAtom(el.sym, r*math.Cos(a), r*math.Sin(a), 0))
		}
	}
	return &molecule.Molecule{Name: "benzene", Multiplicity: 1, Atoms: atoms}
}

// BenchmarkComputeBenzene: one XC evaluation (B3LYP, cc-pVDZ, default grid)
// with a made-up density.
func BenchmarkComputeBenzene(b *testing.B) {
	m := benzeneMol()
	set, _ := basis.Builtin("cc-pvdz")
	mb, _ := basis.Build(set, m, "")
	spec, _ := Level("")
	xc, err := NewXC(m, mb, "b3lyp(vwn-rpa)", spec, 2)
	if err != nil {
		b.Fatal(err)
	}
	nf := 0
	for _, f := range xc.bfuncs {
		nf += len(f)
	}
	b.ReportMetric(float64(nf)/float64(len(xc.bfuncs)), "funcs/batch")
	d := testDensity(mb.NBasis, 21, 0.4)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, _, _, err := xc.Compute(d, d); err != nil {
			b.Fatal(err)
		}
	}
}

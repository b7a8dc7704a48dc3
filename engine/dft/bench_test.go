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

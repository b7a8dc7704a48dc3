package scf

import "gonum.org/v1/gonum/mat"

// rohfEffective builds the ROHF effective operator and its gradient in the
// orthogonal basis from the spin Fock matrices fa, fb (orthogonal basis) and
// the current orbitals c (orthogonal basis, columns; the first nc closed,
// the next nocc−nc open, the rest virtual).
//
// In the orbital basis the operator is
//
//	      closed  open  virtual
//	c  |   Fc     Fβ     Fc
//	o  |   Fβ     Fc     Fα
//	v  |   Fc     Fα     Fc        Fc = (Fα + Fβ)/2
//
// and the gradient is its off-diagonal-block part, antisymmetrised
// (upper blocks +, lower blocks −), which vanishes at self-consistency.
func rohfEffective(fa, fb *mat.SymDense, c *mat.Dense, nc, nocc int) (*mat.SymDense, *mat.Dense) {
	m, _ := c.Dims()
	var t, moA, moB mat.Dense
	t.Mul(fa, c)
	moA.Mul(c.T(), &t)
	t.Reset()
	t.Mul(fb, c)
	moB.Mul(c.T(), &t)
	space := func(i int) int {
		switch {
		case i < nc:
			return 0
		case i < nocc:
			return 1
		}
		return 2
	}
	eff := mat.NewDense(m, m, nil)
	g := mat.NewDense(m, m, nil)
	for i := 0; i < m; i++ {
		for j := i; j < m; j++ {
			si, sj := space(i), space(j)
			a := 0.5 * (moA.At(i, j) + moA.At(j, i))
			b := 0.5 * (moB.At(i, j) + moB.At(j, i))
			v := 0.5 * (a + b)
			switch {
			case si == 0 && sj == 1:
				v = b
			case si == 1 && sj == 2:
				v = a
			}
			eff.Set(i, j, v)
			eff.Set(j, i, v)
			if si != sj {
				g.Set(i, j, v)
				g.Set(j, i, -v)
			}
		}
	}
	// Back to the orthogonal basis: C M Cᵀ.
	var u, r, ge mat.Dense
	u.Mul(c, eff)
	r.Mul(&u, c.T())
	u.Reset()
	u.Mul(c, g)
	ge.Mul(&u, c.T())
	return symmetrise(&r), &ge
}

package props

import (
	"math"
	"math/rand"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/molecule"
)

func randSym(r *rand.Rand, n int) *mat.SymDense {
	a := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			a.SetSym(i, j, r.Float64()-0.5)
		}
	}
	return a
}

// TestTraceless checks Θ = ½(3M − tr M) on a hand-made tensor.
func TestTraceless(t *testing.T) {
	m := [6]float64{1, 2, 6, 0.5, -1, 2}
	got := Traceless(m)
	want := [6]float64{0.5 * (3 - 9), 0.5 * (6 - 9), 0.5 * (18 - 9), 0.75, -1.5, 3}
	for k := range want {
		if math.Abs(got[k]-want[k]) > 1e-15 {
			t.Errorf("component %d: got %g, want %g", k, got[k], want[k])
		}
	}
	if tr := got[0] + got[1] + got[2]; math.Abs(tr) > 1e-15 {
		t.Errorf("trace %g, want 0", tr)
	}
}

// TestShiftMatchesShiftedIntegrals builds random "integrals" about an origin
// O, forms the integrals about O' = O + d exactly as the operators shift,
//
//	⟨μ|(r−O')_i|ν⟩        = ⟨μ|(r−O)_i|ν⟩ − d_i S_μν
//	⟨μ|(r−O')_i(r−O')_j|ν⟩ = ⟨μ|(r−O)_i(r−O)_j|ν⟩ − d_i⟨(r−O)_j⟩ − d_j⟨(r−O)_i⟩ + d_i d_j S,
//
// and checks that Moments.Shift gives what Multipoles gives from those
// integrals, for a neutral and for a charged molecule.
func TestShiftMatchesShiftedIntegrals(t *testing.T) {
	r := rand.New(rand.NewSource(3))
	const n = 6
	S := randSym(r, n)
	for i := 0; i < n; i++ {
		S.SetSym(i, i, 1+float64(i))
	}
	var dip [3]*mat.SymDense
	var sec [6]*mat.SymDense
	for k := range dip {
		dip[k] = randSym(r, n)
	}
	for k := range sec {
		sec[k] = randSym(r, n)
	}
	for _, charge := range []int{0, 1, -1} {
		mol := &molecule.Molecule{Atoms: []molecule.Atom{
			molecule.MustAtom("O", 0.1, -0.2, 0.3),
			molecule.MustAtom("H", 1.5, 1.0, -0.2),
			molecule.MustAtom("H", -1.4, 1.1, 0.1),
		}, Charge: charge}
		// scale a random density so that tr(D S) equals the electron count
		D := randSym(r, n)
		var ds mat.Dense
		ds.Mul(D, S)
		ne := float64(mol.Electrons())
		D.ScaleSym(ne/mat.Trace(&ds), D)
		O := [3]float64{0.3, -0.1, 0.2}
		d := [3]float64{1.7, -2.2, 0.9}
		O2 := [3]float64{O[0] + d[0], O[1] + d[1], O[2] + d[2]}
		var dip2 [3]*mat.SymDense
		var sec2 [6]*mat.SymDense
		for k := range dip {
			dip2[k] = mat.NewSymDense(n, nil)
			for i := 0; i < n; i++ {
				for j := 0; j <= i; j++ {
					dip2[k].SetSym(i, j, dip[k].At(i, j)-d[k]*S.At(i, j))
				}
			}
		}
		for k, p := range Pairs {
			a, b := p[0], p[1]
			sec2[k] = mat.NewSymDense(n, nil)
			for i := 0; i < n; i++ {
				for j := 0; j <= i; j++ {
					v := sec[k].At(i, j) - d[a]*dip[b].At(i, j) - d[b]*dip[a].At(i, j) + d[a]*d[b]*S.At(i, j)
					sec2[k].SetSym(i, j, v)
				}
			}
		}
		m1, err := Multipoles(mol, dip, sec, D, O)
		if err != nil {
			t.Fatal(err)
		}
		m2, err := Multipoles(mol, dip2, sec2, D, O2)
		if err != nil {
			t.Fatal(err)
		}
		sh := m1.Shift(O2, float64(mol.NuclearCharge()))
		for k := 0; k < 3; k++ {
			for _, c := range [][2]float64{{sh.Dipole.Total[k], m2.Dipole.Total[k]}, {sh.Dipole.Nuclear[k], m2.Dipole.Nuclear[k]}, {sh.Dipole.Electronic[k], m2.Dipole.Electronic[k]}} {
				if math.Abs(c[0]-c[1]) > 1e-12 {
					t.Errorf("charge %d dipole %d: shifted %.15g, recomputed %.15g", charge, k, c[0], c[1])
				}
			}
		}
		for k := 0; k < 6; k++ {
			if math.Abs(sh.Quadrupole.Total[k]-m2.Quadrupole.Total[k]) > 1e-11 || math.Abs(sh.SecondMoment.Electronic[k]-m2.SecondMoment.Electronic[k]) > 1e-11 {
				t.Errorf("charge %d quadrupole %d: shifted %.15g, recomputed %.15g", charge, k, sh.Quadrupole.Total[k], m2.Quadrupole.Total[k])
			}
		}
		if m1.DipoleOriginDependent != (charge != 0) {
			t.Errorf("charge %d: dipole origin flag %v", charge, m1.DipoleOriginDependent)
		}
		if !m1.QuadrupoleOriginDependent {
			t.Errorf("charge %d: random density has a dipole, quadrupole must be flagged", charge)
		}
		if charge == 0 {
			for k := 0; k < 3; k++ {
				if math.Abs(m1.Dipole.Total[k]-m2.Dipole.Total[k]) > 1e-12 {
					t.Errorf("neutral dipole %d moved with the origin: %g vs %g", k, m1.Dipole.Total[k], m2.Dipole.Total[k])
				}
			}
		}
	}
}

func TestPopulationsSumToCharge(t *testing.T) {
	r := rand.New(rand.NewSource(5))
	mol := &molecule.Molecule{Atoms: []molecule.Atom{
		molecule.MustAtom("O", 0, 0, 0), molecule.MustAtom("H", 1.8, 0, 0), molecule.MustAtom("H", -0.4, 1.7, 0),
	}, Charge: 1, Multiplicity: 2}
	const n = 5
	funcAtom := []int{0, 0, 0, 1, 2}
	// S = Aᵀ A + n I is positive definite.
	A := randSym(r, n)
	S := mat.NewSymDense(n, nil)
	S.SymOuterK(1, A)
	for i := 0; i < n; i++ {
		S.SetSym(i, i, S.At(i, i)+n)
	}
	Da, Db := randSym(r, n), randSym(r, n)
	na, nb := mol.AlphaBeta()
	for _, x := range []struct {
		d *mat.SymDense
		n int
	}{{Da, na}, {Db, nb}} {
		var ds mat.Dense
		ds.Mul(x.d, S)
		x.d.ScaleSym(float64(x.n)/mat.Trace(&ds), x.d)
	}
	for name, f := range map[string]func(*molecule.Molecule, []int, *mat.SymDense, *mat.SymDense, *mat.SymDense) (Populations, error){"mulliken": Mulliken, "lowdin": Lowdin} {
		p, err := f(mol, funcAtom, S, Da, Db)
		if err != nil {
			t.Fatal(err)
		}
		q, s := 0.0, 0.0
		for a := range p.Charges {
			q += p.Charges[a]
			s += p.Spin[a]
		}
		if math.Abs(q-1) > 1e-12 || math.Abs(s-float64(na-nb)) > 1e-12 {
			t.Errorf("%s: charges sum %g (want 1), spins sum %g (want %d)", name, q, s, na-nb)
		}
	}
	if _, err := Mulliken(mol, funcAtom[:4], S, Da, Db); err == nil {
		t.Error("a short function map must be refused")
	}
}

func TestFrontier(t *testing.T) {
	f, err := FrontierOrbitals([][]float64{{-1, -0.5, 0.1, 0.4}, {-1, -0.3, 0.05, 0.4}}, []int{2, 1})
	if err != nil {
		t.Fatal(err)
	}
	if f.HOMOHartree != -0.5 || f.LUMOHartree != -0.3 || !f.HasLUMO || math.Abs(f.GapHartree-0.2) > 1e-15 {
		t.Errorf("got %+v", f)
	}
	f, err = FrontierOrbitals([][]float64{{-1, -0.5}}, []int{2})
	if err != nil || f.HasLUMO || f.HOMOHartree != -0.5 {
		t.Errorf("no virtuals: got %+v, %v", f, err)
	}
	if _, err := FrontierOrbitals([][]float64{{-1}}, []int{2}); err == nil {
		t.Error("more occupied than orbitals must be refused")
	}
}

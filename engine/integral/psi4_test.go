package integral

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// Reference integrals: psi4 1.3.2 (Debian package), MintsHelper,
// testdata/psi4/integrals.json (generator testdata/psi4/gen_integrals.py),
// which states psi4's function order, signs and Cartesian normalisation.

type psi4Case struct {
	Name      string          `json:"name"`
	Geometry  [][]interface{} `json:"geometry_bohr"`
	Basis     string          `json:"basis"`
	Pure      bool            `json:"puream"`
	NBF       int             `json:"n_basis_functions"`
	Shells    []psi4Shell     `json:"shells"`
	Overlap   [][]float64     `json:"overlap"`
	Kinetic   [][]float64     `json:"kinetic"`
	Potential [][]float64     `json:"potential"`
	ERIs      []struct {
		Mu    int     `json:"mu"`
		Nu    int     `json:"nu"`
		Lam   int     `json:"lambda"`
		Sig   int     `json:"sigma"`
		Value float64 `json:"value"`
	} `json:"eri_selected"`
	ERISumSq float64     `json:"eri_sum_of_squares_full_tensor"`
	ERISum   float64     `json:"eri_sum_full_tensor"`
	ERHF     float64     `json:"rhf_energy_total_hartree"`
	Enuc     float64     `json:"nuclear_repulsion_hartree"`
	Da       [][]float64 `json:"rhf_alpha_density"`
	J        [][]float64 `json:"coulomb_J_of_alpha_density"`
	K        [][]float64 `json:"exchange_K_of_alpha_density"`
}

type psi4Shell struct {
	Atom      int       `json:"atom_index"`
	L         int       `json:"l"`
	First     int       `json:"first_function_index"`
	Exponents []float64 `json:"exponents"`
}

func loadPsi4(t *testing.T) []psi4Case {
	b, err := os.ReadFile("../../testdata/psi4/integrals.json")
	if err != nil {
		t.Fatalf("psi4 reference integrals: %v", err)
	}
	var f struct {
		Cases []psi4Case `json:"cases"`
	}
	if err := json.Unmarshal(b, &f); err != nil {
		t.Fatal(err)
	}
	return f.Cases
}

// psi4Map gives, for each psi4 function, our index and the factor s with
// φ_ours = s·φ_psi4. psi4 Cartesian components share the x^l normalisation
// (ours carry CartNorm); psi4 spherical order is m = 0, +1, −1, +2, −2, …
// (p: z, x, y) with the same signs as ours.
func psi4Map(t *testing.T, c *psi4Case, mb *basis.Molecular) (idx []int, scale []float64) {
	idx = make([]int, c.NBF)
	scale = make([]float64, c.NBF)
	used := make([]bool, len(mb.Shells))
	for _, ps := range c.Shells {
		found := -1
		for k, sh := range mb.Shells {
			if used[k] || sh.Atom != ps.Atom || sh.L != ps.L || len(sh.Exponents) != len(ps.Exponents) {
				continue
			}
			same := true
			for q := range sh.Exponents {
				same = same && math.Abs(sh.Exponents[q]-ps.Exponents[q]) <= 1e-12*ps.Exponents[q]
			}
			if same {
				found = k
				break
			}
		}
		if found < 0 {
			t.Fatalf("%s: no shell of ours matches psi4 shell on atom %d, l=%d", c.Name, ps.Atom, ps.L)
		}
		used[found] = true
		sh := mb.Shells[found]
		off := mb.Offsets[found]
		l := sh.L
		if c.Pure && l >= 1 {
			for q := 0; q < 2*l+1; q++ {
				// q: 0→0, 1→+1, 2→−1, 3→+2, 4→−2 …
				mm := (q + 1) / 2
				if q%2 == 0 {
					mm = -mm
				}
				var ours int
				if l == 1 {
					ours = map[int]int{0: 2, 1: 0, -1: 1}[mm]
				} else {
					ours = mm + l
				}
				idx[ps.First+q] = off + ours
				scale[ps.First+q] = 1
			}
			continue
		}
		for q, cc := range basis.CartComponents(l) {
			idx[ps.First+q] = off + q
			scale[ps.First+q] = basis.CartNorm(cc[0], cc[1], cc[2])
		}
	}
	return idx, scale
}

func TestAgainstPsi4(t *testing.T) {
	for _, c := range loadPsi4(t) {
		t.Run(c.Name, func(t *testing.T) {
			var atoms []molecule.Atom
			for _, g := range c.Geometry {
				atoms = append(atoms, molecule.MustAtom(g[0].(string), g[1].(float64), g[2].(float64), g[3].(float64)))
			}
			ang := basis.Cartesian
			if c.Pure {
				ang = basis.Spherical
			}
			mb, mol := buildBasis(t, c.Basis, ang, atoms...)
			if mb.NBasis != c.NBF {
				t.Fatalf("%d functions, psi4 has %d", mb.NBasis, c.NBF)
			}
			idx, sc := psi4Map(t, &c, mb)
			S, T, V := Overlap(mb), Kinetic(mb), NuclearMolecule(mb, mol)
			for _, m := range []struct {
				name string
				got  *mat.SymDense
				ref  [][]float64
			}{{"overlap", S, c.Overlap}, {"kinetic", T, c.Kinetic}, {"potential", V, c.Potential}} {
				worst := 0.0
				for p := range m.ref {
					for q := range m.ref[p] {
						want := sc[p] * sc[q] * m.ref[p][q]
						worst = math.Max(worst, math.Abs(m.got.At(idx[p], idx[q])-want))
					}
				}
				if worst > 1e-10 {
					t.Errorf("%s: largest deviation from psi4 %.3g", m.name, worst)
				}
			}
			eri, err := NewERI(mb, Options{SchwarzThreshold: 1e-14})
			if err != nil {
				t.Fatal(err)
			}
			full := fullERI(eri)
			n := mb.NBasis
			for _, r := range c.ERIs {
				got := full[((idx[r.Mu]*n+idx[r.Nu])*n+idx[r.Lam])*n+idx[r.Sig]]
				want := sc[r.Mu] * sc[r.Nu] * sc[r.Lam] * sc[r.Sig] * r.Value
				if math.Abs(got-want) > 1e-10 {
					t.Errorf("(%d %d|%d %d) = %.12g, psi4 %.12g", r.Mu, r.Nu, r.Lam, r.Sig, got, want)
				}
			}
			if !c.Pure {
				// Sums over the whole tensor in psi4's own normalisation.
				sum, sumSq := 0.0, 0.0
				inv := make([]float64, n)
				for p := range idx {
					inv[idx[p]] = 1 / sc[p]
				}
				for a := 0; a < n; a++ {
					for b := 0; b < n; b++ {
						for cc := 0; cc < n; cc++ {
							for d := 0; d < n; d++ {
								v := full[((a*n+b)*n+cc)*n+d] * inv[a] * inv[b] * inv[cc] * inv[d]
								sum += v
								sumSq += v * v
							}
						}
					}
				}
				if math.Abs(sum-c.ERISum) > 1e-8*math.Abs(c.ERISum) || math.Abs(sumSq-c.ERISumSq) > 1e-8*c.ERISumSq {
					t.Errorf("ERI sum %.12g / sum of squares %.12g, psi4 %.12g / %.12g", sum, sumSq, c.ERISum, c.ERISumSq)
				}
			}
			D := mat.NewSymDense(n, nil)
			for p := range c.Da {
				for q := range c.Da[p] {
					D.SetSym(idx[p], idx[q], c.Da[p][q]/(sc[p]*sc[q]))
				}
			}
			J, K := eri.JK([]*mat.SymDense{D}, true)
			wj, wk := 0.0, 0.0
			for p := range c.J {
				for q := range c.J[p] {
					wj = math.Max(wj, math.Abs(J[0].At(idx[p], idx[q])-sc[p]*sc[q]*c.J[p][q]))
					wk = math.Max(wk, math.Abs(K[0].At(idx[p], idx[q])-sc[p]*sc[q]*c.K[p][q]))
				}
			}
			if wj > 1e-10 || wk > 1e-10 {
				t.Errorf("J/K largest deviation from psi4 %.3g / %.3g", wj, wk)
			}
			// E = E_nuc + 2 tr(D(T+V)) + tr(D(2J−K)) with psi4's density.
			e := mol.NuclearRepulsion()
			for a := 0; a < n; a++ {
				for b := 0; b < n; b++ {
					e += D.At(a, b) * (2*(T.At(a, b)+V.At(a, b)) + 2*J[0].At(a, b) - K[0].At(a, b))
				}
			}
			if math.Abs(e-c.ERHF) > 1e-9 {
				t.Errorf("RHF energy from psi4's density %.12f, psi4 %.12f", e, c.ERHF)
			}
		})
	}
}

// fullERI builds the whole (μν|λσ) tensor shell block by shell block.
func fullERI(e *ERI) []float64 {
	mb := e.mb
	n := mb.NBasis
	full := make([]float64, n*n*n*n)
	buf := make([]float64, 81*81)
	sh := mb.Shells
	for i := range sh {
		for j := range sh {
			for k := range sh {
				for l := range sh {
					ni, nj, nk, nl := sh[i].NFunc(), sh[j].NFunc(), sh[k].NFunc(), sh[l].NFunc()
					e.Shell(i, j, k, l, buf)
					for a := 0; a < ni; a++ {
						for b := 0; b < nj; b++ {
							for c := 0; c < nk; c++ {
								for d := 0; d < nl; d++ {
									full[(((mb.Offsets[i]+a)*n+mb.Offsets[j]+b)*n+mb.Offsets[k]+c)*n+mb.Offsets[l]+d] = buf[((a*nj+b)*nk+c)*nl+d]
								}
							}
						}
					}
				}
			}
		}
	}
	return full
}

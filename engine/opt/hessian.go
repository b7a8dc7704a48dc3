package opt

import (
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/molecule"
)

// Lindh model Hessian: R. Lindh, A. Bernhardsson, G. Karlström, P.-Å.
// Malmqvist, Chem. Phys. Lett. 241, 423 (1995). Force constants
// k_r = 0.45, k_φ = 0.15, k_τ = 0.005 hartree per unit² weighted by
// ρ_ij = exp(α_ij (r_ref,ij² − r_ij²)); α and r_ref (bohr) by periodic row
// (values from memory). Rows beyond the third use the third row's values.
var (
	lindhAlpha = [3][3]float64{{1.0, 0.3949, 0.3949}, {0.3949, 0.28, 0.28}, {0.3949, 0.28, 0.28}}
	lindhRRef  = [3][3]float64{{1.35, 2.10, 2.53}, {2.10, 2.87, 3.40}, {2.53, 3.40, 3.40}}
)

const (
	lindhKr   = 0.45
	lindhKphi = 0.15
	lindhKtau = 0.005
)

func row(z int) int {
	switch {
	case z <= 2:
		return 0
	case z <= 10:
		return 1
	default:
		return 2
	}
}

// ModelHessian returns the Lindh model Hessian in Cartesian coordinates
// (3N×3N, hartree/bohr²), built as Σ k ρ bᵀb over stretches, bends and
// torsions with Wilson B vectors b, plus a small diagonal floor.
func ModelHessian(m *molecule.Molecule) *mat.Dense {
	na := len(m.Atoms)
	n := 3 * na
	H := mat.NewDense(n, n, nil)
	x := Coordinates(m)
	rho := make([][]float64, na)
	for i := range rho {
		rho[i] = make([]float64, na)
		for j := range rho[i] {
			if i == j {
				continue
			}
			ri, rj := row(m.Atoms[i].Z), row(m.Atoms[j].Z)
			r := m.Distance(i, j)
			rho[i][j] = math.Exp(lindhAlpha[ri][rj] * (lindhRRef[ri][rj]*lindhRRef[ri][rj] - r*r))
		}
	}
	addTerm := func(k float64, atoms []int, f func([]float64) float64) {
		if k < 1e-10 {
			return
		}
		b := numericB(x, atoms, f)
		for ai, a := range atoms {
			for bi, c := range atoms {
				for p := 0; p < 3; p++ {
					for q := 0; q < 3; q++ {
						H.Set(3*a+p, 3*c+q, H.At(3*a+p, 3*c+q)+k*b[3*ai+p]*b[3*bi+q])
					}
				}
			}
		}
	}
	for i := 0; i < na; i++ {
		for j := i + 1; j < na; j++ {
			addTerm(lindhKr*rho[i][j], []int{i, j}, func(y []float64) float64 { return dist(y, 0, 1) })
		}
	}
	for j := 0; j < na; j++ {
		for i := 0; i < na; i++ {
			for k := i + 1; k < na; k++ {
				if i == j || k == j {
					continue
				}
				w := lindhKphi * rho[i][j] * rho[j][k]
				if w < 1e-10 || bendAngle(x, i, j, k) > 175*math.Pi/180 {
					continue
				}
				addTerm(w, []int{i, j, k}, func(y []float64) float64 { return bendAngleLocal(y) })
			}
		}
	}
	for j := 0; j < na; j++ {
		for k := j + 1; k < na; k++ {
			for i := 0; i < na; i++ {
				for l := 0; l < na; l++ {
					if i == j || i == k || l == j || l == k || i == l {
						continue
					}
					w := lindhKtau * rho[i][j] * rho[j][k] * rho[k][l]
					if w < 1e-10 || bendAngle(x, i, j, k) > 175*math.Pi/180 || bendAngle(x, j, k, l) > 175*math.Pi/180 {
						continue
					}
					addTerm(w, []int{i, j, k, l}, torsionLocal)
				}
			}
		}
	}
	for i := 0; i < n; i++ {
		H.Set(i, i, H.At(i, i)+1e-3)
	}
	return H
}

// numericB is the gradient of an internal coordinate f of the listed
// atoms with respect to their Cartesian coordinates (central differences;
// only used for the model Hessian, where 1e-6 accuracy is ample).
func numericB(x []float64, atoms []int, f func([]float64) float64) []float64 {
	loc := make([]float64, 3*len(atoms))
	for ai, a := range atoms {
		copy(loc[3*ai:], x[3*a:3*a+3])
	}
	b := make([]float64, len(loc))
	const h = 1e-5
	for i := range loc {
		o := loc[i]
		loc[i] = o + h
		fp := f(loc)
		loc[i] = o - h
		fm := f(loc)
		loc[i] = o
		d := fp - fm
		// torsions wrap at ±π
		if d > math.Pi {
			d -= 2 * math.Pi
		} else if d < -math.Pi {
			d += 2 * math.Pi
		}
		b[i] = d / (2 * h)
	}
	return b
}

func dist(y []float64, a, b int) float64 {
	dx, dy, dz := y[3*a]-y[3*b], y[3*a+1]-y[3*b+1], y[3*a+2]-y[3*b+2]
	return math.Sqrt(dx*dx + dy*dy + dz*dz)
}

func vec(y []float64, a int) [3]float64 { return [3]float64{y[3*a], y[3*a+1], y[3*a+2]} }

func bendAngle(x []float64, i, j, k int) float64 {
	m := &molecule.Molecule{Atoms: []molecule.Atom{{Z: 1, PosBohr: vec(x, i)}, {Z: 1, PosBohr: vec(x, j)}, {Z: 1, PosBohr: vec(x, k)}}}
	return m.AngleDegrees(0, 1, 2) * math.Pi / 180
}

func bendAngleLocal(y []float64) float64 { return bendAngle(y, 0, 1, 2) }

func torsionLocal(y []float64) float64 {
	m := &molecule.Molecule{Atoms: []molecule.Atom{{Z: 1, PosBohr: vec(y, 0)}, {Z: 1, PosBohr: vec(y, 1)}, {Z: 1, PosBohr: vec(y, 2)}, {Z: 1, PosBohr: vec(y, 3)}}}
	return m.DihedralDegrees(0, 1, 2, 3) * math.Pi / 180
}

// Package symmetry finds the point group of a molecule's geometry within a
// tolerance and symmetrises geometries and vectors (gradients, steps) to
// it, so that a geometry optimisation keeps the symmetry its input has: a
// planar molecule stays planar, a C2v one C2v.
//
// Detection: every operation is a rotation, reflection, inversion or
// improper rotation about the centre of mass that maps each atom onto an
// atom of the same element within the tolerance. Candidate axes are the
// principal axes of inertia, the directions of the atoms, and, within each
// set of atoms of one element at one distance from the centre, the sums,
// differences and cross products of pairs (and the normals of triples for
// the smallest such set); rotations of order 2 to 8, mirror planes,
// improper rotations and the inversion are tried, and the operations found
// are closed under products. Linear molecules get C∞v or D∞h, represented
// by a two-fold rotation about the axis (which removes every component
// across the axis) and, for D∞h, the inversion.
//
// The operations are then made exact for the geometry symmetrised with
// them (a few rounds of averaging the geometry over the group and refitting
// each operation's matrix to its atom permutation), so averaging a vector
// over the group is a projection to rounding: applied to every gradient and
// step it keeps the geometry symmetric to about 1e-15 bohr.
package symmetry

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/molecule"
)

// DefaultToleranceAngstrom is the distance within which an operation must
// bring each atom onto an equivalent one (common practice, no source:
// coordinates given to three or four decimals are symmetric within it).
const DefaultToleranceAngstrom = 0.01

// Op is one symmetry operation: positions relative to the group's centre
// go to R·r, and atom a onto atom Perm[a].
type Op struct {
	R    [3][3]float64
	Perm []int
}

// Group is the point group of a geometry.
type Group struct {
	// Name is the Schoenflies symbol ("C2v", "D6h", "C∞v", …).
	Name   string
	Ops    []Op
	Centre [3]float64 // bohr
	Linear bool
	// MaxShiftBohr is the largest change Symmetrize made to the detected
	// geometry's atoms.
	MaxShiftBohr float64
}

// Order is the number of operations (2 for the finite stand-in of C∞v, 4 for D∞h).
func (g *Group) Order() int { return len(g.Ops) }

type vec [3]float64

func sub(a, b vec) vec           { return vec{a[0] - b[0], a[1] - b[1], a[2] - b[2]} }
func add(a, b vec) vec           { return vec{a[0] + b[0], a[1] + b[1], a[2] + b[2]} }
func dot(a, b vec) float64       { return a[0]*b[0] + a[1]*b[1] + a[2]*b[2] }
func norm(a vec) float64         { return math.Sqrt(dot(a, a)) }
func scale(a vec, s float64) vec { return vec{a[0] * s, a[1] * s, a[2] * s} }
func cross(a, b vec) vec {
	return vec{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}
func apply(R [3][3]float64, v vec) vec {
	return vec{R[0][0]*v[0] + R[0][1]*v[1] + R[0][2]*v[2], R[1][0]*v[0] + R[1][1]*v[1] + R[1][2]*v[2], R[2][0]*v[0] + R[2][1]*v[1] + R[2][2]*v[2]}
}

func mul(A, B [3][3]float64) [3][3]float64 {
	var C [3][3]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			for k := 0; k < 3; k++ {
				C[i][j] += A[i][k] * B[k][j]
			}
		}
	}
	return C
}

func det(R [3][3]float64) float64 {
	return R[0][0]*(R[1][1]*R[2][2]-R[1][2]*R[2][1]) - R[0][1]*(R[1][0]*R[2][2]-R[1][2]*R[2][0]) + R[0][2]*(R[1][0]*R[2][1]-R[1][1]*R[2][0])
}

func identity() [3][3]float64 { return [3][3]float64{{1, 0, 0}, {0, 1, 0}, {0, 0, 1}} }

// rotation by angle θ about unit axis u, followed by a reflection through
// the plane normal to u when improper.
func rotation(u vec, th float64, improper bool) [3][3]float64 {
	c, s := math.Cos(th), math.Sin(th)
	var R [3][3]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			R[i][j] = (1 - c) * u[i] * u[j]
			if i == j {
				R[i][j] += c
			}
		}
	}
	R[0][1] -= s * u[2]
	R[0][2] += s * u[1]
	R[1][0] += s * u[2]
	R[1][2] -= s * u[0]
	R[2][0] -= s * u[1]
	R[2][1] += s * u[0]
	if improper {
		R = mul(reflection(u), R)
	}
	return R
}

// reflection through the plane with unit normal n.
func reflection(n vec) [3][3]float64 {
	R := identity()
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			R[i][j] -= 2 * n[i] * n[j]
		}
	}
	return R
}

// frame holds the atoms relative to the centre, for the operation tests.
type frame struct {
	z   []int
	r   []vec
	tol float64
}

// match returns the permutation R brings the atoms into, or nil.
func (f *frame) match(R [3][3]float64, tol float64) []int {
	n := len(f.r)
	perm := make([]int, n)
	used := make([]bool, n)
	for a := 0; a < n; a++ {
		p := apply(R, f.r[a])
		best, bd := -1, tol
		for b := 0; b < n; b++ {
			if used[b] || f.z[b] != f.z[a] {
				continue
			}
			if d := norm(sub(p, f.r[b])); d < bd {
				best, bd = b, d
			}
		}
		if best < 0 {
			return nil
		}
		perm[a], used[best] = best, true
	}
	return perm
}

// Detect returns the point group of m's geometry within tolAngstrom (most
// abundant isotopes' centre of mass).
func Detect(m *molecule.Molecule, tolAngstrom float64) *Group {
	tol := tolAngstrom * molecule.AngstromBohr
	c := vec(m.CentreOfMass())
	f := &frame{tol: tol}
	for _, a := range m.Atoms {
		f.z = append(f.z, a.Z)
		f.r = append(f.r, sub(vec(a.PosBohr), c))
	}
	g := &Group{Centre: c}
	if axis, ok := linearAxis(f.r, tol); ok {
		g.Linear = true
		g.Ops = linearOps(f, axis)
		g.Name = "C∞v"
		if len(g.Ops) == 4 {
			g.Name = "D∞h"
		}
		return g
	}
	ops := []Op{{R: identity(), Perm: seq(len(f.r))}}
	try := func(R [3][3]float64) {
		if p := f.match(R, tol); p != nil {
			ops = addOp(ops, Op{R: R, Perm: p})
		}
	}
	try(scaleM(identity(), -1))
	axes := candidateAxes(m, f)
	for _, u := range axes {
		for n := 2; n <= 8; n++ {
			th := 2 * math.Pi / float64(n)
			try(rotation(u, th, false))
			try(rotation(u, th/2, true)) // S2n
			if n >= 3 {
				try(rotation(u, th, true)) // Sn
			}
		}
		try(reflection(u))
	}
	for _, u := range mirrorNormals(f) {
		try(reflection(u))
	}
	ops = closure(f, ops, 2*tol)
	g.Ops = ops
	g.Name = name(ops)
	return g
}

func seq(n int) []int {
	p := make([]int, n)
	for i := range p {
		p[i] = i
	}
	return p
}

func scaleM(R [3][3]float64, s float64) [3][3]float64 {
	for i := range R {
		for j := range R[i] {
			R[i][j] *= s
		}
	}
	return R
}

// addOp appends op unless an operation with the same permutation and
// (nearly) the same matrix is there.
func addOp(ops []Op, op Op) []Op {
	if has(ops, op) {
		return ops
	}
	return append(ops, op)
}

func has(ops []Op, op Op) bool {
	for _, o := range ops {
		if samePerm(o.Perm, op.Perm) && sameR(o.R, op.R) {
			return true
		}
	}
	return false
}

func samePerm(a, b []int) bool {
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func sameR(A, B [3][3]float64) bool {
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			if math.Abs(A[i][j]-B[i][j]) > 1e-3 {
				return false
			}
		}
	}
	return true
}

// closure adds products of the operations until none is new (at most 240).
func closure(f *frame, ops []Op, tol float64) []Op {
	for changed := true; changed && len(ops) < 240; {
		changed = false
		n := len(ops)
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				R := mul(ops[i].R, ops[j].R)
				p := make([]int, len(f.r))
				for a := range p {
					p[a] = ops[i].Perm[ops[j].Perm[a]]
				}
				if has(ops, Op{R: R, Perm: p}) || f.match(R, tol) == nil {
					continue
				}
				ops = append(ops, Op{R: R, Perm: p})
				changed = true
			}
		}
	}
	return ops
}

// linearAxis returns the molecular axis when every atom lies within tol of
// one line through the centre.
func linearAxis(r []vec, tol float64) (vec, bool) {
	far := 0
	for a := range r {
		if norm(r[a]) > norm(r[far]) {
			far = a
		}
	}
	if norm(r[far]) < tol {
		return vec{}, false // a single atom: no axis
	}
	u := scale(r[far], 1/norm(r[far]))
	for _, p := range r {
		if norm(sub(p, scale(u, dot(p, u)))) > tol {
			return vec{}, false
		}
	}
	return u, true
}

// linearOps: E and the two-fold rotation about the axis (C∞v), with the
// inversion and the mirror plane across the axis when centrosymmetric (D∞h).
func linearOps(f *frame, u vec) []Op {
	c2 := rotation(u, math.Pi, false)
	ops := []Op{{R: identity(), Perm: seq(len(f.r))}, {R: c2, Perm: seq(len(f.r))}}
	if p := f.match(scaleM(identity(), -1), f.tol); p != nil {
		ops = append(ops, Op{R: scaleM(identity(), -1), Perm: p}, Op{R: scaleM(c2, -1), Perm: p})
	}
	return ops
}

// classes groups the atoms by element and distance from the centre.
func classes(f *frame) [][]int {
	var out [][]int
	done := make([]bool, len(f.r))
	for a := range f.r {
		if done[a] {
			continue
		}
		cl := []int{a}
		done[a] = true
		for b := a + 1; b < len(f.r); b++ {
			if !done[b] && f.z[b] == f.z[a] && math.Abs(norm(f.r[a])-norm(f.r[b])) < f.tol {
				cl = append(cl, b)
				done[b] = true
			}
		}
		out = append(out, cl)
	}
	return out
}

// maxPairClass bounds the pair loops over one class.
const maxPairClass = 64

func candidateAxes(m *molecule.Molecule, f *frame) []vec {
	var axes []vec
	addAxis := func(v vec) {
		n := norm(v)
		if n < 1e-6 {
			return
		}
		u := scale(v, 1/n)
		for _, w := range axes {
			if math.Abs(math.Abs(dot(u, w))-1) < 1e-8 {
				return
			}
		}
		axes = append(axes, u)
	}
	for _, u := range principalAxes(m, f) {
		addAxis(u)
	}
	for _, p := range f.r {
		if norm(p) > f.tol {
			addAxis(p)
		}
	}
	cls := classes(f)
	smallest := -1
	for i, cl := range cls {
		if len(cl) > maxPairClass {
			continue
		}
		for x := 0; x < len(cl); x++ {
			for y := x + 1; y < len(cl); y++ {
				a, b := f.r[cl[x]], f.r[cl[y]]
				if s := add(a, b); norm(s) > f.tol {
					addAxis(s)
				}
				addAxis(cross(a, b))
			}
		}
		if len(cl) >= 3 && (smallest < 0 || len(cl) < len(cls[smallest])) {
			smallest = i
		}
	}
	if smallest >= 0 && len(cls[smallest]) <= 24 {
		cl := cls[smallest]
		for x := 0; x < len(cl); x++ {
			for y := x + 1; y < len(cl); y++ {
				for z := y + 1; z < len(cl); z++ {
					addAxis(cross(sub(f.r[cl[y]], f.r[cl[x]]), sub(f.r[cl[z]], f.r[cl[x]])))
				}
			}
		}
	}
	return axes
}

// mirrorNormals: a mirror exchanging two equivalent atoms has its normal
// along their difference.
func mirrorNormals(f *frame) []vec {
	var out []vec
	for _, cl := range classes(f) {
		if len(cl) > maxPairClass {
			continue
		}
		for x := 0; x < len(cl); x++ {
			for y := x + 1; y < len(cl); y++ {
				d := sub(f.r[cl[x]], f.r[cl[y]])
				if n := norm(d); n > f.tol {
					out = append(out, scale(d, 1/n))
				}
			}
		}
	}
	return out
}

func principalAxes(m *molecule.Molecule, f *frame) []vec {
	I := mat.NewSymDense(3, nil)
	for a, p := range f.r {
		el, _ := molecule.ByZ(m.Atoms[a].Z)
		w := el.MassDalton
		for i := 0; i < 3; i++ {
			for j := i; j < 3; j++ {
				v := -w * p[i] * p[j]
				if i == j {
					v += w * dot(p, p)
				}
				I.SetSym(i, j, I.At(i, j)+v)
			}
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(I, true) {
		return nil
	}
	var V mat.Dense
	eig.VectorsTo(&V)
	var out []vec
	for k := 0; k < 3; k++ {
		out = append(out, vec{V.At(0, k), V.At(1, k), V.At(2, k)})
	}
	return out
}

// opKind classifies an operation: proper rotations by their angle, and the
// improper ones as mirror, inversion or improper rotation.
type opKind struct {
	proper bool
	angle  float64 // proper: rotation angle; improper: angle of the rotation part
	axis   vec
	mirror bool
	inv    bool
}

func classify(R [3][3]float64) opKind {
	d := det(R)
	k := opKind{proper: d > 0}
	M := R
	if !k.proper {
		M = scaleM(R, -1) // R = −M with M proper: inversion·rotation
	}
	tr := M[0][0] + M[1][1] + M[2][2]
	th := math.Acos(math.Max(-1, math.Min(1, (tr-1)/2)))
	// axis: eigenvector of M with eigenvalue 1 (largest column of M + Mᵀ + (1 − tr)I).
	var S [3][3]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			S[i][j] = M[i][j] + M[j][i]
		}
		S[i][i] += 1 - tr
	}
	best := 0
	for j := 1; j < 3; j++ {
		if norm(vec{S[0][j], S[1][j], S[2][j]}) > norm(vec{S[0][best], S[1][best], S[2][best]}) {
			best = j
		}
	}
	ax := vec{S[0][best], S[1][best], S[2][best]}
	if n := norm(ax); n > 1e-9 {
		ax = scale(ax, 1/n)
	}
	k.axis = ax
	if k.proper {
		k.angle = th
		return k
	}
	// R = −M: −rotation by th equals the improper rotation by th − π.
	k.angle = math.Pi - th
	k.inv = th < 1e-6                      // M = E: R = −E
	k.mirror = math.Abs(th-math.Pi) < 1e-6 // M = C2: R = σ normal to the axis
	return k
}

// name gives the Schoenflies symbol of a finite group of operations.
func name(ops []Op) string {
	type axisInfo struct {
		u     vec
		order int
	}
	var axes []axisInfo
	mirrors := []vec{}
	inversion := false
	var improper []opKind
	for _, o := range ops {
		k := classify(o.R)
		switch {
		case k.proper && k.angle < 1e-6:
		case k.proper:
			n := int(math.Round(2 * math.Pi / k.angle))
			found := false
			for i := range axes {
				if math.Abs(math.Abs(dot(axes[i].u, k.axis))-1) < 1e-4 {
					found = true
					if n > axes[i].order {
						axes[i].order = n
					}
				}
			}
			if !found {
				axes = append(axes, axisInfo{k.axis, n})
			}
		case k.inv:
			inversion = true
		case k.mirror:
			mirrors = append(mirrors, k.axis)
		default:
			improper = append(improper, k)
		}
	}
	sort.SliceStable(axes, func(i, j int) bool { return axes[i].order > axes[j].order })
	count := func(n int) int {
		c := 0
		for _, a := range axes {
			if a.order == n || (a.order%n == 0 && n > 1) {
				c++
			}
		}
		return c
	}
	if count(3) > 1 { // several three-fold axes: cubic and icosahedral groups
		switch {
		case count(5) > 0 && inversion:
			return "Ih"
		case count(5) > 0:
			return "I"
		case count(4) > 0 && inversion:
			return "Oh"
		case count(4) > 0:
			return "O"
		case inversion:
			return "Th"
		case len(mirrors) > 0:
			return "Td"
		}
		return "T"
	}
	if len(axes) == 0 {
		switch {
		case len(mirrors) > 0:
			return "Cs"
		case inversion:
			return "Ci"
		}
		return "C1"
	}
	z := axes[0]
	n := z.order
	perp := 0
	for _, a := range axes[1:] {
		if a.order == 2 && math.Abs(dot(a.u, z.u)) < 1e-4 {
			perp++
		}
	}
	sigmaH := false
	for _, m := range mirrors {
		if math.Abs(math.Abs(dot(m, z.u))-1) < 1e-4 {
			sigmaH = true
		}
	}
	sigmaV := len(mirrors)
	if sigmaH {
		sigmaV--
	}
	switch {
	case perp >= n && sigmaH:
		return fmt.Sprintf("D%dh", n)
	case perp >= n && sigmaV > 0:
		return fmt.Sprintf("D%dd", n)
	case perp >= n:
		return fmt.Sprintf("D%d", n)
	case sigmaH:
		return fmt.Sprintf("C%dh", n)
	case sigmaV > 0:
		return fmt.Sprintf("C%dv", n)
	case len(improper) > 0:
		return fmt.Sprintf("S%d", 2*n)
	}
	return fmt.Sprintf("C%d", n)
}

// average returns (1/|G|) Σ_g R_g v, with v_a carried to atom Perm_g[a]
// (v relative to the centre for positions).
func (g *Group) average(v []float64) []float64 {
	out := make([]float64, len(v))
	for _, o := range g.Ops {
		for a, b := range o.Perm {
			w := apply(o.R, vec{v[3*a], v[3*a+1], v[3*a+2]})
			for k := 0; k < 3; k++ {
				out[3*b+k] += w[k]
			}
		}
	}
	for i := range out {
		out[i] /= float64(len(g.Ops))
	}
	return out
}

// Vector symmetrises a displacement-like 3N vector (a gradient or a step):
// its totally symmetric part.
func (g *Group) Vector(v []float64) []float64 { return g.average(v) }

// Positions symmetrises Cartesian positions (bohr, 3N) about the centre.
func (g *Group) Positions(x []float64) []float64 {
	r := make([]float64, len(x))
	for i := range x {
		r[i] = x[i] - g.Centre[i%3]
	}
	s := g.average(r)
	for i := range s {
		s[i] += g.Centre[i%3]
	}
	return s
}

// Symmetrize makes the group exact for a geometry near x and returns that
// geometry: a few rounds of averaging x over the group and refitting each
// operation's matrix to its permutation (the orthogonal matrix of the
// operation's handedness that best maps the averaged positions, by SVD).
// Linear groups are made exact by putting the atoms on the axis.
func (g *Group) Symmetrize(x []float64) []float64 {
	y := append([]float64(nil), x...)
	if g.Linear {
		// The two-fold rotation removes every component across the axis:
		// the averaged atoms lie on one line; rebuild the operations on it.
		y = g.Positions(y)
		var r []vec
		for a := 0; a < len(y)/3; a++ {
			r = append(r, sub(vec{y[3*a], y[3*a+1], y[3*a+2]}, vec(g.Centre)))
		}
		if u, ok := linearAxis(r, 1e-6); ok {
			c2 := rotation(u, math.Pi, false)
			g.Ops[1].R = c2
			if len(g.Ops) == 4 {
				g.Ops[3].R = scaleM(c2, -1)
			}
		}
	} else {
		for round := 0; round < 4; round++ {
			y = g.Positions(y)
			for i := 1; i < len(g.Ops); i++ {
				g.Ops[i].R = fit(y, g.Centre, g.Ops[i])
			}
		}
		y = g.Positions(y)
	}
	for i := range y {
		g.MaxShiftBohr = math.Max(g.MaxShiftBohr, math.Abs(y[i]-x[i]))
	}
	return y
}

// fit is the orthogonal matrix (of o's handedness) that best carries the
// positions y (about c) of each atom a onto those of o.Perm[a].
func fit(y []float64, c [3]float64, o Op) [3][3]float64 {
	M := mat.NewDense(3, 3, nil)
	for a, b := range o.Perm {
		for i := 0; i < 3; i++ {
			for j := 0; j < 3; j++ {
				M.Set(i, j, M.At(i, j)+(y[3*b+i]-c[i])*(y[3*a+j]-c[j]))
			}
		}
	}
	var svd mat.SVD
	if !svd.Factorize(M, mat.SVDFull) {
		return o.R
	}
	var U, V mat.Dense
	svd.UTo(&U)
	svd.VTo(&V)
	var Rm mat.Dense
	Rm.Mul(&U, V.T())
	var R [3][3]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			R[i][j] = Rm.At(i, j)
		}
	}
	if (det(R) > 0) != (det(o.R) > 0) {
		// flip the direction of the smallest singular value
		for i := 0; i < 3; i++ {
			for j := 0; j < 3; j++ {
				R[i][j] -= 2 * U.At(i, 2) * V.At(j, 2)
			}
		}
	}
	return R
}

package mp2

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/integral"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

// FieldDipole is a dipole from finite electric fields.
type FieldDipole struct {
	// DipoleAU is the Richardson-extrapolated total dipole (e·a0) about OriginBohr.
	DipoleAU [3]float64
	// StepH and Step2H are the central differences with steps h and 2h.
	StepH, Step2H [3]float64
	// ErrorEstimateAU is |D(h) − Richardson| per component.
	ErrorEstimateAU [3]float64
	StepAU          float64
	OriginBohr      [3]float64
}

// FiniteFieldDipole differentiates the MP2 (or, with scs, any spin-scaled)
// total energy with respect to a uniform field F: each SCF is run with the
// one-electron perturbation F·⟨μ|(r−O)|ν⟩ (the energy of an electron in
// the field) and μ = Σ_A Z_A (R_A − O) − dE/dF, by central differences
// with steps h and 2h and Richardson extrapolation (4 D(h) − D(2h))/3.
// sameScale and oppositeScale weight the spin components (1, 1 for MP2).
// Twelve SCF + MP2 calculations.
func FiniteFieldDipole(mol *molecule.Molecule, mb *basis.Molecular, scfOpt scf.Options, opt Options, sameScale, oppositeScale, stepAU float64, origin [3]float64) (*FieldDipole, error) {
	if !(stepAU > 0) {
		return nil, fmt.Errorf("mp2: finite-field step %g au must be positive", stepAU)
	}
	opt.Relaxed = false
	dip, _ := integral.Multipole(mb, origin)
	if scfOpt.ERI == nil {
		eri, err := integral.NewERI(mb, integral.Options{SchwarzThreshold: scfOpt.SchwarzThreshold, Threads: scfOpt.Threads, MemoryBudgetBytes: scfOpt.MemoryBudgetBytes})
		if err != nil {
			return nil, fmt.Errorf("mp2: finite field: %v", err)
		}
		scfOpt.ERI = eri
	}
	energy := func(k int, f float64) (float64, error) {
		o := scfOpt
		v := mat.NewSymDense(mb.NBasis, nil)
		v.ScaleSym(f, dip[k])
		if scfOpt.Perturbation != nil {
			v.AddSym(v, scfOpt.Perturbation)
		}
		o.Perturbation = v
		sr, err := scf.Run(mol, mb, o)
		if err != nil {
			return 0, err
		}
		if !sr.Converged {
			return 0, fmt.Errorf("mp2: finite field: SCF at field %g au along %c did not converge", f, "xyz"[k])
		}
		r, err := Run(mol, mb, sr, opt)
		if err != nil {
			return 0, err
		}
		return sr.Energy + r.ScaledCorrelationHartree(sameScale, oppositeScale), nil
	}
	out := &FieldDipole{StepAU: stepAU, OriginBohr: origin}
	var nuc [3]float64
	for _, a := range mol.Atoms {
		for k := 0; k < 3; k++ {
			nuc[k] += float64(a.Z) * (a.PosBohr[k] - origin[k])
		}
	}
	h := stepAU
	for k := 0; k < 3; k++ {
		var e [4]float64
		for i, f := range []float64{h, -h, 2 * h, -2 * h} {
			v, err := energy(k, f)
			if err != nil {
				return nil, err
			}
			e[i] = v
		}
		d1 := nuc[k] - (e[0]-e[1])/(2*h)
		d2 := nuc[k] - (e[2]-e[3])/(4*h)
		rich := (4*d1 - d2) / 3
		out.StepH[k], out.Step2H[k], out.DipoleAU[k] = d1, d2, rich
		out.ErrorEstimateAU[k] = math.Abs(d1 - rich)
	}
	return out, nil
}

package engine

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/cc"
	"moltrail/engine/integral"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

// ccLevel runs the job's coupled-cluster level on a converged RHF reference.
// tight, for finite-field energies, tightens the criteria to at least
// FieldCCTight (the coupled-cluster energy is not stationary in the
// orbitals, so their convergence enters it to first order).
func ccLevel(job *Job, mol *molecule.Molecule, sr *scf.Result, o RunOptions, progress, tight bool) (*cc.Result, *cc.Active, error) {
	cs := job.Correlation
	frozen := 0
	if cs.FrozenCore {
		frozen = mol.CoreOrbitals()
	}
	act, err := cc.FromRHF(sr, frozen, o.threads())
	if err != nil {
		return nil, nil, fmt.Errorf("method %s: %v", job.Method, err)
	}
	set := cs.CC
	if set == nil {
		d := DefaultCC
		set = &d
	}
	opt := cc.Options{EnergyTolHartree: set.EnergyTolHartree, AmplitudeTol: set.AmplitudeTol, MaxIter: set.MaxIter,
		DIISSize: set.DIISSize, Triples: job.Method == "ccsd(t)", Threads: o.threads()}
	if tight {
		opt.EnergyTolHartree = math.Min(opt.EnergyTolHartree, FieldCCTight.EnergyTolHartree)
		opt.AmplitudeTol = math.Min(opt.AmplitudeTol, FieldCCTight.AmplitudeTol)
	}
	if progress && o.Progress != nil {
		opt.Progress = prefixWriter{o.Progress, "  cc "}
	}
	r, err := cc.Run(act.Source, act.Energies, act.Occupied, opt)
	if err != nil {
		return nil, nil, fmt.Errorf("method %s: %v", job.Method, err)
	}
	return r, act, nil
}

// ccEnergy is the level's total energy.
func ccEnergy(sr *scf.Result, r *cc.Result) float64 {
	return sr.Energy + r.CCSDCorrelationHartree + r.TriplesHartree
}

// coupledCluster adds the CCSD or CCSD(T) energy (and, with withProps and
// the finite-field route, the dipole) to res.
func coupledCluster(job *Job, mol *molecule.Molecule, mb *basis.Molecular, sr *scf.Result, res *Result, o RunOptions, withProps bool) error {
	o.logf("  %s: transforming integrals (%d basis functions)\n", job.Method, mb.NBasis)
	r, act, err := ccLevel(job, mol, sr, o, true, false)
	if err != nil {
		return err
	}
	c := &CoupledCluster{Method: job.Method, FrozenOrbitals: act.Frozen, ActiveOccupied: r.Occupied, Virtual: r.Virtual,
		Integrals: "exact", MP2CorrelationHartree: r.MP2CorrelationHartree, CCSDCorrelationHartree: r.CCSDCorrelationHartree,
		CCSDTotalHartree: sr.Energy + r.CCSDCorrelationHartree, T1Diagnostic: r.T1Diagnostic, LargestT2: r.LargestT2}
	for _, it := range r.Iterations {
		c.Iterations = append(c.Iterations, CCIteration{Iteration: it.Iter, CorrelationHartree: it.Energy, DeltaEHartree: it.DeltaE, AmplitudeRMS: it.AmplitudeRMS, DIISVectors: it.DIISVectors})
	}
	res.CoupledCluster = c
	if !r.Converged {
		last := r.Iterations[len(r.Iterations)-1]
		res.Status = StatusNotConverged
		res.Error = fmt.Sprintf("CCSD did not converge in %d iterations (last ΔE %.2e Eh, amplitude RMS change %.2e)", len(r.Iterations), last.DeltaE, last.AmplitudeRMS)
		ec := r.CCSDCorrelationHartree
		res.CorrelationEnergyHartree = &ec
		res.EnergyHartree = sr.Energy + ec
		return nil
	}
	if job.Method == "ccsd(t)" {
		t := r.TriplesHartree
		c.TriplesHartree = &t
	}
	ec := r.CCSDCorrelationHartree + r.TriplesHartree
	res.CorrelationEnergyHartree = &ec
	res.EnergyHartree = sr.Energy + ec
	if r.T1Diagnostic > 0.02 {
		res.Notes = append(res.Notes, fmt.Sprintf("T1 diagnostic %.3f exceeds 0.02: the single-reference treatment may be poor for this molecule", r.T1Diagnostic))
	}
	if !withProps {
		return nil
	}
	if job.Correlation.RelaxedProperties != "finite-field" {
		res.Notes = append(res.Notes, "coupled-cluster properties were not requested: no dipole or quadrupole at the "+job.Method+" level (scf_dipole_debye holds the SCF density's; the finite-field route gives the "+job.Method+" dipole)")
		return nil
	}
	origin := job.OriginBohr(mol)
	fd, err := ccFieldDipole(job, mol, mb, sr, o, origin)
	if err != nil {
		return err
	}
	res.LevelProperties = fd
	d := fd.DipoleDebye
	res.DipoleDebye = &d
	res.QuadrupoleBuckingham = nil
	res.Notes = append(res.Notes, "the finite-field route gives the "+job.Method+" dipole only; no quadrupole is reported at this level")
	return nil
}

// FieldDipoleAU is the dipole (atomic units, about origin) from the energies
// E(F) of a molecule in uniform fields F along each axis, E including the
// interaction F·⟨r⟩ of the electrons and not that of the nuclei, so that
// μ_k = Σ_A Z_A (R_A − O)_k − dE/dF_k. formula "two-point":
// dE/dF ≈ (E(h) − E(−h))/(2h); "four-point": (8(E(h) − E(−h)) − (E(2h) − E(−2h)))/(12h).
// The four-point formula's error estimate is its change from the
// two-point value; the two-point formula (six energies instead of twelve)
// has none.
func FieldDipoleAU(energy func(k int, f float64) (float64, error), nuclear [3]float64, h float64, formula string) (dip, errEst [3]float64, err error) {
	fields := []float64{h, -h, 2 * h, -2 * h}
	switch formula {
	case "two-point":
		fields = fields[:2]
	case "four-point":
	default:
		return dip, errEst, fmt.Errorf("finite-field formula %q is not known (two-point or four-point)", formula)
	}
	for k := 0; k < 3; k++ {
		var e [4]float64
		for i, f := range fields {
			if e[i], err = energy(k, f); err != nil {
				return dip, errEst, err
			}
		}
		two := (e[0] - e[1]) / (2 * h)
		dip[k] = nuclear[k] - two
		if formula == "four-point" {
			four := (8*(e[0]-e[1]) - (e[2] - e[3])) / (12 * h)
			dip[k] = nuclear[k] - four
			errEst[k] = math.Abs(two - four)
		}
	}
	return dip, errEst, nil
}

// Convergence of the SCF and coupled-cluster calculations in a field: the
// job's criteria or these, whichever are tighter. An energy error δ becomes
// a dipole error of about δ/h.
var (
	FieldSCFTight = SCFSettings{EnergyTolHartree: 1e-12, DensityTol: 1e-10, GradientTol: 1e-9}
	FieldCCTight  = CCSettings{EnergyTolHartree: 1e-11, AmplitudeTol: 1e-10}
)

// ccFieldDipole computes the coupled-cluster dipole by finite fields
// (six calculations with the two-point formula, twelve with four points).
func ccFieldDipole(job *Job, mol *molecule.Molecule, mb *basis.Molecular, sr *scf.Result, o RunOptions, origin [3]float64) (*Properties, error) {
	cs := job.Correlation
	dip, _ := integral.Multipole(mb, origin)
	so := scfOptions(job, o, mb.NBasis)
	so.ERI = sr.ERI
	so.EnergyTolHartree = math.Min(so.EnergyTolHartree, FieldSCFTight.EnergyTolHartree)
	so.DensityTol = math.Min(so.DensityTol, FieldSCFTight.DensityTol)
	so.GradientTol = math.Min(so.GradientTol, FieldSCFTight.GradientTol)
	n, total := 0, 12
	if cs.FieldFormula == "two-point" {
		total = 6
	}
	energy := func(k int, f float64) (float64, error) {
		n++
		o.logf("  %s finite field %d/%d: %+g au along %c\n", job.Method, n, total, f, "xyz"[k])
		v := mat.NewSymDense(mb.NBasis, nil)
		v.ScaleSym(f, dip[k])
		s := so
		s.Perturbation = v
		s.Progress = nil
		fr, err := scf.Run(mol, mb, s)
		if err != nil {
			return 0, err
		}
		if !fr.Converged {
			return 0, fmt.Errorf("method %s: finite field: SCF at field %g au along %c did not converge", job.Method, f, "xyz"[k])
		}
		r, _, err := ccLevel(job, mol, fr, o, false, true)
		if err != nil {
			return 0, err
		}
		if !r.Converged {
			return 0, fmt.Errorf("method %s: finite field: CCSD at field %g au along %c did not converge", job.Method, f, "xyz"[k])
		}
		return ccEnergy(fr, r), nil
	}
	var nuc [3]float64
	for _, a := range mol.Atoms {
		for k := 0; k < 3; k++ {
			nuc[k] += float64(a.Z) * (a.PosBohr[k] - origin[k])
		}
	}
	d, est, err := FieldDipoleAU(energy, nuc, cs.FieldStepAU, cs.FieldFormula)
	if err != nil {
		return nil, err
	}
	pr := &Properties{Density: job.Method + "-finite-field", OriginBohr: origin, OriginKind: job.Origin.Kind,
		Method: fmt.Sprintf("finite electric fields of %g au along x, y, z: %s central-difference formula of %s energies (SCF and CC in the fields converged to at least %g/%g/%g and %g/%g)",
			cs.FieldStepAU, cs.FieldFormula, job.Method, FieldSCFTight.EnergyTolHartree, FieldSCFTight.DensityTol, FieldSCFTight.GradientTol, FieldCCTight.EnergyTolHartree, FieldCCTight.AmplitudeTol),
		FiniteFieldStepAU: cs.FieldStepAU, DipoleOriginDependent: mol.Charge != 0}
	var errD float64
	for k := 0; k < 3; k++ {
		pr.DipoleDebye[k] = d[k] * molecule.DebyePerAU
		errD = math.Max(errD, est[k]*molecule.DebyePerAU)
	}
	pr.Dipole = MultipoleParts{TotalAU: d[:], NuclearAU: nuc[:], ElectronicAU: []float64{d[0] - nuc[0], d[1] - nuc[1], d[2] - nuc[2]}}
	pr.DipoleNormD = math.Sqrt(pr.DipoleDebye[0]*pr.DipoleDebye[0] + pr.DipoleDebye[1]*pr.DipoleDebye[1] + pr.DipoleDebye[2]*pr.DipoleDebye[2])
	pr.FiniteFieldErrorDebye = errD
	return pr, nil
}

package engine

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/dft"
	"moltrail/engine/grad"
	"moltrail/engine/molecule"
	"moltrail/engine/mp2"
	"moltrail/engine/scf"
)

// newXC builds the exchange–correlation object of a DFT job.
func newXC(job *Job, mol *molecule.Molecule, mb *basis.Molecular, o RunOptions) (scf.XC, error) {
	if job.Grid == nil {
		return nil, fmt.Errorf("method %s needs an integration grid, but the job has none", job.Method)
	}
	xc, err := dft.NewXC(mol, mb, job.Functional, job.Grid.DFTGrid(), o.threads())
	if err != nil {
		return nil, fmt.Errorf("method %s: %v", job.Method, err)
	}
	o.logf("  %s: %s on %d grid points (%s grid)\n", job.Method, xc.Definition(), xc.Grid().NPoints(), job.Grid.Level)
	return xc, nil
}

// correlate adds the MP2-family energy (and, with withProps, the relaxed
// dipole and quadrupole) to res.
func correlate(job *Job, mol *molecule.Molecule, mb *basis.Molecular, sr *scf.Result, res *Result, o RunOptions, withProps bool) error {
	info := Methods[job.Method]
	cs := job.Correlation
	relaxed := withProps && cs.RelaxedProperties == "z-vector"
	o.logf("  %s: transforming integrals (%d basis functions)\n", job.Method, mb.NBasis)
	budget := o.memory().correlated(mb.NBasis, sr.ERI.Stats().StoredBytes)
	r, err := mp2.Run(mol, mb, sr, mp2.Options{FrozenCore: cs.FrozenCore, Relaxed: relaxed, SameSpinScale: info.SameSpin, OppositeSpinScale: info.OppositeSpin, Threads: o.threads(), MemoryBudgetBytes: budget})
	if err != nil {
		return fmt.Errorf("%v (the job's memory limit is %s)", err, FormatMemorySize(o.memory().limit))
	}
	ec := r.ScaledCorrelationHartree(info.SameSpin, info.OppositeSpin)
	res.CorrelationEnergyHartree = &ec
	res.EnergyHartree = sr.Energy + ec
	res.Correlation = &Correlation{
		Method: job.Method, SameSpinHartree: r.SameSpinHartree, OppositeSpinHartree: r.OppositeSpinHartree,
		SameSpinScale: info.SameSpin, OppositeSpinScale: info.OppositeSpin, FrozenOrbitals: r.FrozenOrbitals,
		MP2TotalHartree: sr.Energy + r.CorrelationHartree,
	}
	if !withProps {
		return nil
	}
	origin := job.OriginBohr(mol)
	switch cs.RelaxedProperties {
	case "z-vector":
		dt := mat.NewSymDense(mb.NBasis, nil)
		dt.AddSym(r.RelaxedDa, r.RelaxedDb)
		pr, err := oneElectronProperties(mol, mb, sr, dt, origin, job.Origin.Kind)
		if err != nil {
			return err
		}
		pr.Density = "mp2-relaxed"
		pr.Method = fmt.Sprintf("analytic relaxed density (Z-vector, %d iterations, residual %.1e)", r.ZVectorIterations, r.ZVectorResidual)
		res.LevelProperties = pr
		d, q := pr.DipoleDebye, pr.QuadrupoleBuckingham
		res.DipoleDebye, res.QuadrupoleBuckingham = &d, &q
	case "finite-field":
		so := scfOptions(job, o, mb.NBasis)
		so.ERI = sr.ERI
		fd, err := mp2.FiniteFieldDipole(mol, mb, so, mp2.Options{FrozenCore: cs.FrozenCore, Threads: o.threads(), MemoryBudgetBytes: budget}, info.SameSpin, info.OppositeSpin, cs.FieldStepAU, origin)
		if err != nil {
			return err
		}
		var nuc [3]float64
		for _, a := range mol.Atoms {
			for k := 0; k < 3; k++ {
				nuc[k] += float64(a.Z) * (a.PosBohr[k] - origin[k])
			}
		}
		pr := &Properties{Density: "mp2-finite-field", OriginBohr: origin, OriginKind: job.Origin.Kind,
			Method:            "finite electric fields: central differences with steps h and 2h, Richardson extrapolation",
			FiniteFieldStepAU: cs.FieldStepAU, DipoleOriginDependent: mol.Charge != 0}
		var errD float64
		for k := 0; k < 3; k++ {
			pr.DipoleDebye[k] = fd.DipoleAU[k] * molecule.DebyePerAU
			errD = math.Max(errD, fd.ErrorEstimateAU[k]*molecule.DebyePerAU)
		}
		pr.Dipole = MultipoleParts{TotalAU: fd.DipoleAU[:], NuclearAU: nuc[:], ElectronicAU: []float64{fd.DipoleAU[0] - nuc[0], fd.DipoleAU[1] - nuc[1], fd.DipoleAU[2] - nuc[2]}}
		pr.DipoleNormD = math.Sqrt(pr.DipoleDebye[0]*pr.DipoleDebye[0] + pr.DipoleDebye[1]*pr.DipoleDebye[1] + pr.DipoleDebye[2]*pr.DipoleDebye[2])
		pr.FiniteFieldErrorDebye = errD
		res.LevelProperties = pr
		d := pr.DipoleDebye
		res.DipoleDebye = &d
		res.QuadrupoleBuckingham = nil
		res.Notes = append(res.Notes, "the finite-field route gives the relaxed dipole only; no quadrupole is reported at this level")
	default:
		res.Notes = append(res.Notes, "relaxed properties were not requested: no dipole or quadrupole at the "+job.Method+" level (scf_dipole_debye and scf_properties hold the SCF density's)")
	}
	return nil
}

// gradient returns the energy and analytic nuclear gradient at mol.
// SCF levels (HF, DFT) only; a DFT gradient includes the grid-weight
// derivatives (see engine/grad and engine/dft).
func gradient(job *Job, mol *molecule.Molecule, set *basis.Set, o RunOptions) (float64, []float64, error) {
	info := Methods[job.Method]
	if info.Family != "hf" && info.Family != "dft" {
		return 0, nil, fmt.Errorf("method %s: analytic gradients cover the SCF levels (HF, DFT) only; use the finite-difference gradient method", job.Method)
	}
	mb, err := basis.Build(set, mol, job.Basis.Angular)
	if err != nil {
		return 0, nil, err
	}
	so := scfOptions(job, o, mb.NBasis)
	var xcg grad.XCGradient
	if info.Family == "dft" {
		xc, err := newXC(job, mol, mb, o)
		if err != nil {
			return 0, nil, err
		}
		g, ok := xc.(grad.XCGradient)
		if !ok {
			return 0, nil, fmt.Errorf("method %s: the exchange–correlation code of this build has no nuclear gradient; use the finite-difference gradient method", job.Method)
		}
		so.XC, xcg = xc, g
	}
	sr, err := scf.Run(mol, mb, so)
	if err != nil {
		return 0, nil, err
	}
	if !sr.Converged {
		return 0, nil, errNotConverged{fmt.Sprintf("SCF did not converge in %d iterations", len(sr.Iterations))}
	}
	g, err := grad.SCF(mol, mb, sr, grad.Options{Threads: o.threads(), XC: xcg})
	if err != nil {
		return 0, nil, err
	}
	return sr.Energy, g, nil
}

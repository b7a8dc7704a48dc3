package report

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"math"
	"sort"
	"testing"

	"moltrail/archive"
	"moltrail/compare"
	"moltrail/engine"
	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// The fixtures are made-up records and a hand-built comparison table: they
// exercise the report, not the chemistry. Geometries are rounded
// textbook-like shapes ("common practice, no source"); reference values in
// the fixture are invented for the test and are not literature values.

type fixMol struct {
	name  string
	atoms []engine.GeomAtom
	// one entry of each kind: bond, angle, dipole, Θzz
	bond, angle, dipole, quad float64
	bondLabel, angleLabel     string
}

var baseMols = []fixMol{
	{name: "water", atoms: []engine.GeomAtom{{Symbol: "O", XYZ: [3]float64{0, 0, 0.1173}}, {Symbol: "H", XYZ: [3]float64{0, 0.7572, -0.4692}}, {Symbol: "H", XYZ: [3]float64{0, -0.7572, -0.4692}}},
		bond: 95.78, angle: 104.48, dipole: 1.855, quad: 0.11, bondLabel: "r(O–H)", angleLabel: "∠(H–O–H)"},
	{name: "ammonia", atoms: []engine.GeomAtom{{Symbol: "N", XYZ: [3]float64{0, 0, 0.1116}}, {Symbol: "H", XYZ: [3]float64{0, 0.9377, -0.2604}}, {Symbol: "H", XYZ: [3]float64{0.8121, -0.4689, -0.2604}}, {Symbol: "H", XYZ: [3]float64{-0.8121, -0.4689, -0.2604}}},
		bond: 101.24, angle: 106.67, dipole: 1.472, quad: -2.42, bondLabel: "r(N–H)", angleLabel: "∠(H–N–H)"},
	{name: "carbon monoxide", atoms: []engine.GeomAtom{{Symbol: "C", XYZ: [3]float64{0, 0, -0.6446}}, {Symbol: "O", XYZ: [3]float64{0, 0, 0.4836}}},
		bond: 112.83, angle: 180, dipole: 0.110, quad: -1.95, bondLabel: "r(C–O)", angleLabel: "—"},
	{name: "formaldehyde", atoms: []engine.GeomAtom{{Symbol: "C", XYZ: [3]float64{0, 0, -0.5265}}, {Symbol: "O", XYZ: [3]float64{0, 0, 0.6795}}, {Symbol: "H", XYZ: [3]float64{0, 0.9353, -1.1143}}, {Symbol: "H", XYZ: [3]float64{0, -0.9353, -1.1143}}},
		bond: 120.47, angle: 116.13, dipole: 2.332, quad: -0.04, bondLabel: "r(C–O)", angleLabel: "∠(H–C–H)"},
}

type fixLevel struct {
	method, basis string
	fc            bool
	bias          [4]float64 // bond pm, angle °, dipole D, quad D·Å
}

var fixLevels = []fixLevel{
	{"hf", "cc-pVDZ", false, [4]float64{-1.6, 0.9, 0.16, 0.08}},
	{"mp2", "cc-pVDZ", true, [4]float64{0.9, -0.7, 0.05, -0.05}},
	{"b3lyp", "aug-cc-pVDZ", false, [4]float64{0.4, 0.3, -0.02, 0.02}},
}

func hexOf(parts ...any) string {
	s := sha256.Sum256([]byte(fmt.Sprint(parts...)))
	return hex.EncodeToString(s[:])
}

func levelLabel(l fixLevel) string {
	m := map[string]string{"hf": "HF", "mp2": "MP2", "b3lyp": "B3LYP"}[l.method]
	if l.fc {
		m += "(fc)"
	}
	return m + "/" + l.basis
}

// fixture makes nMol molecules (the base four, then shifted copies) at
// three levels: 3·nMol records and a table over them.
func fixture(t testing.TB, nMol int) (*compare.Table, []archive.Record) {
	t.Helper()
	var recs []archive.Record
	tbl := &compare.Table{
		RefSet:   compare.RefSetInfo{Name: "small-polar-test", Description: "made-up test references", Source: "invented for the report tests", Origin: "test", SHA256: hexOf("refset"), Entries: 4 * nMol},
		Settings: compare.Settings{BootstrapSamples: 2000, BootstrapSeed: 7, Confidence: 0.95},
		Legend: []compare.CautionInfo{
			{Code: compare.CodeSmall, Title: "value near zero", Explain: "The reference is within a few uncertainties of zero, so relative deviations are meaningless."},
			{Code: compare.CodeFlip, Title: "sign differs from reference", Explain: "The computed value has the opposite sign to the reference."},
			{Code: compare.CodeCancel, Title: "nuclear and electronic parts cancel", Explain: "The total is a small difference of large nuclear and electronic contributions."},
		},
		Notes: []string{"Equilibrium structures are compared with reference r_e values; vibrational averaging is not included."},
	}
	for _, l := range fixLevels {
		tbl.Levels = append(tbl.Levels, compare.Level{Label: levelLabel(l), Method: l.method, Basis: l.basis, FrozenCore: l.fc})
	}
	sets := map[string]*basis.Set{}
	for i := 0; i < nMol; i++ {
		bm := baseMols[i%len(baseMols)]
		name := bm.name
		if i >= len(baseMols) {
			name = fmt.Sprintf("%s %d", bm.name, i/len(baseMols)+1)
		}
		for li, l := range fixLevels {
			set, ok := sets[l.basis]
			if !ok {
				var err error
				if set, err = basis.Builtin(l.basis); err != nil {
					t.Fatal(err)
				}
				sets[l.basis] = set
			}
			job := engine.Job{Version: engine.CanonicalVersion, Method: l.method, Task: "optimize", SCF: engine.DefaultSCF, Origin: engine.DefaultOrigin,
				Basis: engine.BasisSpec{Name: set.Name, File: set.File, SHA256: set.SHA256, Angular: set.Angular},
				Opt:   &engine.OptSettings{MaxForce: 4.5e-4, RMSForce: 3e-4, MaxStep: 1.8e-3, EnergyChange: 1e-6, MaxSteps: 100, TrustRadiusBohr: 0.3, Coordinates: "redundant-internal", GradientMethod: "analytic"}}
			job.Molecule = engine.MoleculeSpec{Name: name, Charge: 0, Multiplicity: 1}
			for _, a := range bm.atoms {
				job.Molecule.Atoms = append(job.Molecule.Atoms, engine.AtomSpec{Symbol: a.Symbol, Bohr: [3]float64{a.XYZ[0] * molecule.AngstromBohr, a.XYZ[1] * molecule.AngstromBohr, a.XYZ[2] * molecule.AngstromBohr}})
			}
			switch l.method {
			case "mp2":
				job.Reference = "rhf"
				job.Correlation = &engine.CorrelationSettings{FrozenCore: l.fc, RelaxedProperties: "z-vector"}
			case "b3lyp":
				job.Reference = "rks"
				job.Functional = "b3lyp(vwn-rpa)"
				job.Grid = &engine.GridSpec{Level: "fine", RadialScheme: "treutler-m4", RadialPoints: 75, AngularOrder: 29, Partition: "becke", Pruning: "none", DensityCut: 1e-12, BasisCut: 1e-12}
			default:
				job.Reference = "rhf"
			}
			// final geometry: the input stretched a little per level
			var geom []engine.GeomAtom
			for _, a := range bm.atoms {
				k := 1 + l.bias[0]/1000
				geom = append(geom, engine.GeomAtom{Symbol: a.Symbol, XYZ: [3]float64{a.XYZ[0] * k, a.XYZ[1] * k, a.XYZ[2]*k + float64(i/len(baseMols))*1e-3}})
			}
			e := -76.0 - float64(i)*0.37 - float64(li)*0.21
			res := engine.Result{EnergyHartree: e, SCFEnergyHartree: e + 0.2*float64(li%2), GeometryAngstrom: geom, Status: engine.StatusConverged}
			if l.method == "mp2" {
				c := -0.2
				res.CorrelationEnergyHartree = &c
				res.Correlation = &engine.Correlation{Method: "mp2", FrozenOrbitals: 1}
			}
			rec := archive.Record{ID: hexOf("rec", name, li), InputKey: hexOf("in", name, li), Status: engine.StatusConverged, Input: job,
				Code:    archive.Code{Program: "moltrail", Version: "0.1.0", Revision: hexOf("rev")[:40], GoVersion: "go1.26.8", OS: "linux", Arch: "amd64", ExecutableSHA256: hexOf("exe"), CanonicalVersion: engine.CanonicalVersion},
				Run:     archive.Run{StartUTC: fmt.Sprintf("2025-03-%02dT10:00:00Z", 1+i%27), EndUTC: fmt.Sprintf("2025-03-%02dT10:05:00Z", 1+i%27)},
				Results: res}
			recs = append(recs, rec)
			tbl.Picked = append(tbl.Picked, compare.Pick{Molecule: name, Level: levelLabel(l), Purpose: compare.PurposeStructure, RecordID: rec.ID, Candidates: 1, Reason: "the only converged optimisation at this level"})
			wiggle := math.Sin(float64(i*7+li*3)) * 0.3
			add := func(kind, unit, q string, ref, unc, bias float64, cautions []string) {
				comp := ref + bias + wiggle*math.Abs(bias)
				tbl.Deviations = append(tbl.Deviations, compare.Deviation{EntryID: name + "/" + q, Level: levelLabel(l), RecordID: rec.ID, Molecule: name, Quantity: q, Kind: kind, Unit: unit,
					Reference: ref, Uncertainty: unc, RefKind: "experiment", RefSource: "invented test value", Computed: comp, Signed: comp - ref, Cautions: cautions})
			}
			add(compare.KindBondLength, "pm", bm.bondLabel, bm.bond, 0.05, l.bias[0], nil)
			if bm.angleLabel != "—" {
				add(compare.KindAngle, "degree", bm.angleLabel, bm.angle, 0.1, l.bias[1], nil)
			}
			var dc []string
			if bm.dipole < 0.2 {
				dc = []string{compare.CodeSmall}
				if l.method == "hf" {
					dc = append(dc, compare.CodeFlip)
					tbl.Cautions = append(tbl.Cautions, compare.Caution{Code: compare.CodeFlip, Title: "sign differs from reference", Molecule: name, Quantity: "μ", Level: levelLabel(l), RecordID: rec.ID, Detail: "computed dipole points the other way (C⁻O⁺ against C⁺O⁻)"})
				}
				tbl.Cautions = append(tbl.Cautions, compare.Caution{Code: compare.CodeSmall, Title: "value near zero", Molecule: name, Quantity: "μ", Level: levelLabel(l), RecordID: rec.ID, Detail: fmt.Sprintf("|μ_ref| = %.3f D is below the 0.2 D floor", bm.dipole)})
			}
			add(compare.KindDipoleNorm, "D", "μ", bm.dipole, 0.001, l.bias[2], dc)
			var qc []string
			if math.Abs(bm.quad) < 0.2 {
				qc = []string{compare.CodeCancel}
				tbl.Cautions = append(tbl.Cautions, compare.Caution{Code: compare.CodeCancel, Title: "nuclear and electronic parts cancel", Molecule: name, Quantity: "Θzz", Level: levelLabel(l), RecordID: rec.ID, Detail: "nuclear 12.41 D·Å, electronic −12.30 D·Å (ratio 113)"})
			}
			add(compare.KindQuadrupole, "D·Å", "Θzz", bm.quad, 0.02, l.bias[3], qc)
		}
	}
	// statistics per level and kind
	type key struct{ level, kind string }
	groups := map[key][]compare.Deviation{}
	var order []key
	for _, d := range tbl.Deviations {
		k := key{d.Level, d.Kind}
		if _, ok := groups[k]; !ok {
			order = append(order, k)
		}
		groups[k] = append(groups[k], d)
	}
	sort.SliceStable(order, func(i, j int) bool { return order[i].kind < order[j].kind })
	for _, k := range order {
		ds := groups[k]
		s := compare.Stats{Level: k.level, Kind: k.kind, Unit: ds[0].Unit, N: len(ds), Confidence: 0.95}
		for _, d := range ds {
			s.MSE += d.Signed
			s.MAE += math.Abs(d.Signed)
			s.RMS += d.Signed * d.Signed
			if math.Abs(d.Signed) > s.MaxAbs {
				s.MaxAbs, s.MaxSigned, s.MaxAt = math.Abs(d.Signed), d.Signed, d.Molecule+" "+d.Quantity
			}
			if len(d.Cautions) > 0 {
				s.Flagged++
			}
		}
		n := float64(len(ds))
		s.MSE /= n
		s.MAE /= n
		s.RMS = math.Sqrt(s.RMS / n)
		for _, d := range ds {
			s.SD += (d.Signed - s.MSE) * (d.Signed - s.MSE)
		}
		if len(ds) > 1 {
			s.SD = math.Sqrt(s.SD / (n - 1))
		} else {
			s.SD = 0
		}
		if len(ds) >= 3 {
			lo, hi := s.MSE-2*s.SD/math.Sqrt(n), s.MSE+2*s.SD/math.Sqrt(n)
			s.CILow, s.CIHigh = &lo, &hi
		}
		tbl.Stats = append(tbl.Stats, s)
	}
	md := 1.23
	tbl.LevelDiffs = []compare.LevelDiff{{LevelA: levelLabel(fixLevels[1]), LevelB: levelLabel(fixLevels[0]), Kind: compare.KindBondLength, Unit: "pm", N: nMol, MeanDiff: 2.5, CILow: &md, CIHigh: &md, MAEDiff: -0.7, Confidence: 0.95, Significant: true,
		Verdict: "MP2 bond lengths are longer than HF ones on every common entry; the difference is larger than its bootstrap interval."}}
	tbl.Excluded = []compare.Excluded{{RecordID: hexOf("excluded"), Molecule: "water", Level: "HF/cc-pVDZ", Status: engine.StatusNotConverged, Reason: "the SCF did not converge, so the record cannot stand for this level"}}
	tbl.Unmatched = []compare.Unmatched{{EntryID: "ozone/r(O–O)", Molecule: "ozone", Quantity: "r(O–O)", Level: "MP2(fc)/cc-pVDZ", Reason: "no record of this molecule"}}
	return tbl, recs
}

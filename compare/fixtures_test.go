package compare

import (
	"encoding/json"
	"os"
	"testing"

	"moltrail/archive"
	"moltrail/engine"
	"moltrail/engine/molecule"
)

// psi4Case is the part of a testdata/psi4/scf_energies.json case the
// fixtures use.
type psi4Case struct {
	Name        string           `json:"name"`
	Geometry    [][4]interface{} `json:"geometry_bohr"`
	Charge      int              `json:"charge"`
	Mult        int              `json:"multiplicity"`
	Basis       string           `json:"basis"`
	Energy      float64          `json:"energy_total_hartree"`
	Dipole      []float64        `json:"dipole_au"`
	DipoleNuc   []float64        `json:"dipole_nuclear_au"`
	DipoleEl    []float64        `json:"dipole_electronic_au"`
	Quadrupole  []float64        `json:"traceless_quadrupole_au_xx_xy_xz_yy_yz_zz"`
	MP2Relaxed  []float64        `json:"mp2_relaxed_dipole_au"`
	MP2Energy   float64          `json:"mp2_total_energy_hartree"`
	SCFDipoleCk []float64        `json:"psi4_oeprop_dipole_debye_check"`
}

func loadPsi4(t testing.TB, file string) map[string]psi4Case {
	b, err := os.ReadFile("../testdata/psi4/" + file)
	if err != nil {
		t.Fatalf("psi4 check values: %v", err)
	}
	var doc struct {
		Cases       []psi4Case `json:"cases"`
		DipoleCases []psi4Case `json:"dipole_cases"`
	}
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatalf("%s: %v", file, err)
	}
	out := map[string]psi4Case{}
	for _, c := range append(doc.Cases, doc.DipoleCases...) {
		out[c.Name] = c
	}
	return out
}

// fixture describes a hand-built record.
type fixture struct {
	id, name, method, basis, task, status, start string
	geomBohr                                     [][4]interface{}
	charge, mult                                 int
	energy                                       float64
	dipoleAU                                     []float64 // total, about originBohr
	nucAU, elAU                                  []float64 // parts (optional)
	quadAU                                       []float64 // traceless xx xy xz yy yz zz (optional)
	originKind                                   string
	originBohr                                   [3]float64
	levelProps                                   bool // store the moments as level (not SCF) properties
}

func (f fixture) record() *archive.Record {
	job := engine.Job{Version: engine.CanonicalVersion, Method: f.method, Task: f.task, SCF: engine.DefaultSCF,
		Basis: engine.BasisSpec{Name: f.basis}, Origin: engine.OriginSpec{Kind: f.originKind}}
	if job.Task == "" {
		job.Task = "energy"
	}
	if job.Origin.Kind == "" {
		job.Origin.Kind = "coordinate-origin"
	}
	if f.method == "mp2" {
		job.Correlation = &engine.CorrelationSettings{RelaxedProperties: "finite-field", FieldStepAU: 1e-3}
	}
	if job.Task == "optimize" {
		o := engine.DefaultOpt
		job.Opt = &o
	}
	mult := f.mult
	if mult == 0 {
		mult = 1
	}
	job.Molecule = engine.MoleculeSpec{Name: f.name, Charge: f.charge, Multiplicity: mult}
	var geom []engine.GeomAtom
	for _, a := range f.geomBohr {
		s := a[0].(string)
		x, y, z := a[1].(float64), a[2].(float64), a[3].(float64)
		job.Molecule.Atoms = append(job.Molecule.Atoms, engine.AtomSpec{Symbol: s, Bohr: [3]float64{x, y, z}})
		geom = append(geom, engine.GeomAtom{Symbol: s, XYZ: [3]float64{x * molecule.BohrAngstrom, y * molecule.BohrAngstrom, z * molecule.BohrAngstrom}})
	}
	status := f.status
	if status == "" {
		status = engine.StatusConverged
	}
	r := &archive.Record{ID: f.id, Status: status, Input: job, Run: archive.Run{StartUTC: f.start},
		Results: engine.Result{EnergyHartree: f.energy, SCFEnergyHartree: f.energy, GeometryAngstrom: geom, Status: status,
			MultipoleOriginBohr: f.originBohr}}
	if f.dipoleAU != nil {
		d := [3]float64{f.dipoleAU[0] * molecule.DebyePerAU, f.dipoleAU[1] * molecule.DebyePerAU, f.dipoleAU[2] * molecule.DebyePerAU}
		r.Results.DipoleDebye = &d
		p := &engine.Properties{Density: "scf", OriginBohr: f.originBohr, OriginKind: job.Origin.Kind, DipoleDebye: d,
			Dipole: engine.MultipoleParts{TotalAU: f.dipoleAU, NuclearAU: f.nucAU, ElectronicAU: f.elAU}}
		if f.quadAU != nil {
			q := engine.Quadrupole{XX: f.quadAU[0], XY: f.quadAU[1], XZ: f.quadAU[2], YY: f.quadAU[3], YZ: f.quadAU[4], ZZ: f.quadAU[5]}
			b := molecule.BuckinghamPerAU
			qb := engine.Quadrupole{XX: q.XX * b, XY: q.XY * b, XZ: q.XZ * b, YY: q.YY * b, YZ: q.YZ * b, ZZ: q.ZZ * b}
			r.Results.QuadrupoleBuckingham = &qb
			p.QuadrupoleBuckingham = qb
			p.Quadrupole = engine.MultipoleParts{TotalAU: f.quadAU}
		}
		if f.levelProps {
			p.Density = "mp2-relaxed"
			r.Results.LevelProperties = p
		} else {
			r.Results.SCFProperties = p
			sd := d
			r.Results.SCFDipoleDebye = &sd
		}
	}
	return r
}

// psi4Fixture turns a psi4 SCF case into an HF record. Numbers: psi4
// 1.3.2, testdata/psi4/scf_energies.json (multipoles about the bohr
// frame's origin, which the fixture records as the record's origin).
func psi4Fixture(c psi4Case, id, name, basis, start string) fixture {
	return fixture{id: id, name: name, method: "hf", basis: basis, start: start, geomBohr: c.Geometry, charge: c.Charge, mult: c.Mult,
		energy: c.Energy, dipoleAU: c.Dipole, nucAU: c.DipoleNuc, elAU: c.DipoleEl, quadAU: c.Quadrupole}
}

package archive

import (
	"errors"
	"fmt"
	"math"
	"time"

	"moltrail/engine"
	"moltrail/engine/molecule"
)

// Verdicts of a reproduction.
const (
	Reproduced      = "reproduced"
	Differs         = "differs"
	NotReproducible = "cannot be reproduced"
)

// Tolerance is the allowed difference for one kind of quantity, with the
// rule it was derived by from the record's own convergence criteria.
type Tolerance struct {
	Kind string  `json:"kind"`
	Abs  float64 `json:"abs"`
	Unit string  `json:"unit"`
	Rule string  `json:"rule"`
}

// Tolerances derives comparison tolerances from a job's criteria:
// energies 10 × scf.energy_tol_hartree (two runs each within the criterion
// of the limit, with margin); dipoles and quadrupoles, which are first
// order in the orbital error, 10 × scf.orbital_gradient_tol atomic units
// converted (at least 1e-6), plus the stored finite-field error estimate
// for relaxed dipoles; geometry: single points reuse the input geometry
// (1e-10 Å, 1e-8°), optimisations 10 × max_step_bohr.
func Tolerances(r *Record) map[string]Tolerance {
	s := r.Input.SCF
	t := map[string]Tolerance{}
	t[KindEnergy] = Tolerance{KindEnergy, 10 * s.EnergyTolHartree, "hartree", "10 × scf.energy_tol_hartree"}
	dip := math.Max(1e-6, 10*s.GradientTol*molecule.DebyePerAU)
	rule := "10 × scf.orbital_gradient_tol in e·a0, as D (≥ 1e-6)"
	if lp := r.Results.LevelProperties; lp != nil && lp.FiniteFieldErrorDebye > 0 {
		dip += lp.FiniteFieldErrorDebye
		rule += " + the stored finite-field error estimate"
	}
	t[KindDipole] = Tolerance{KindDipole, dip, "D", rule}
	t[KindQuadrupole] = Tolerance{KindQuadrupole, math.Max(1e-6, 10*s.GradientTol*molecule.BuckinghamPerAU), "D·Å", "10 × scf.orbital_gradient_tol in e·a0², as D·Å (≥ 1e-6)"}
	if o := r.Input.Opt; o != nil && r.Input.Task == "optimize" {
		l := 10 * o.MaxStep * molecule.BohrAngstrom
		t[KindLength] = Tolerance{KindLength, l, "Å", "10 × optimization.max_step_bohr"}
		t[KindAngle] = Tolerance{KindAngle, l * 180 / math.Pi, "degrees", "the length tolerance over a 1 Å arm"}
	} else {
		t[KindLength] = Tolerance{KindLength, 1e-10, "Å", "single point: the input geometry"}
		t[KindAngle] = Tolerance{KindAngle, 1e-8, "degrees", "single point: the input geometry"}
	}
	return t
}

// Check is one quantity compared.
type Check struct {
	Quantity string  `json:"quantity"`
	Unit     string  `json:"unit"`
	Original float64 `json:"original"`
	New      float64 `json:"new"`
	Diff     float64 `json:"difference"`
	Tol      float64 `json:"tolerance"`
	Within   bool    `json:"within"`
}

// Reproduction is the outcome of re-running a record.
type Reproduction struct {
	Original   string      `json:"original_id"`
	New        string      `json:"new_id,omitempty"`
	Molecule   string      `json:"molecule"`
	Verdict    string      `json:"verdict"`
	Reason     string      `json:"reason,omitempty"`
	Tolerances []Tolerance `json:"tolerances"`
	Checks     []Check     `json:"checks"`
	Moved      []Check     `json:"moved"`
	Code       []CodeDiff  `json:"code_differences"`
	// Inputs are the reproductions of a derived record's inputs.
	Inputs []*Reproduction `json:"inputs,omitempty"`
}

// Compare checks every quantity of b against a with a's tolerances.
func Compare(a, b *Record) (checks, moved []Check, statusMsg string) {
	tol := Tolerances(a)
	qb := map[string]Quantity{}
	for _, q := range Quantities(b) {
		qb[q.Path] = q
	}
	checks, moved = []Check{}, []Check{}
	for _, q := range Quantities(a) {
		t := tol[q.Kind]
		o, ok := qb[q.Path]
		if !ok {
			c := Check{Quantity: q.Path, Unit: t.Unit, Original: q.Value, New: math.NaN(), Tol: t.Abs}
			moved = append(moved, c)
			continue
		}
		d := o.Value - q.Value
		c := Check{Quantity: q.Path, Unit: t.Unit, Original: q.Value, New: o.Value, Diff: d, Tol: t.Abs, Within: math.Abs(d) <= t.Abs}
		checks = append(checks, c)
		if !c.Within {
			moved = append(moved, c)
		}
	}
	if a.Status != b.Status {
		statusMsg = fmt.Sprintf("status was %s, now %s", a.Status, b.Status)
	}
	return checks, moved, statusMsg
}

// Reproducible says why a record's input cannot be run by this build, or "".
func Reproducible(r *Record) string {
	if r.Derivation != nil {
		if _, ok := Recipes[r.Derivation.Recipe]; !ok {
			return fmt.Sprintf("derivation recipe %q is no longer available", r.Derivation.Recipe)
		}
		return ""
	}
	job := r.Input
	if _, ok := engine.Methods[job.Method]; !ok {
		return fmt.Sprintf("method %q is no longer available", job.Method)
	}
	if err := job.Validate(); err != nil {
		return "the input is not valid for this build: " + err.Error()
	}
	if _, err := job.ResolveBasis(); err != nil {
		var bc *engine.BasisChangedError
		if errors.As(err, &bc) {
			return "basis data changed: " + err.Error()
		}
		return "the basis cannot be loaded: " + err.Error()
	}
	return ""
}

// Reproduce re-runs the stored record id's exact input with this code,
// stores the new run (lineage: reproduces) and compares every quantity.
func Reproduce(dir, id string, req RunRequest, compute Computer) (*Reproduction, error) {
	st, err := Open(dir, OpenOptions{ReadOnly: true, Wait: req.Wait, Log: req.Log})
	if err != nil {
		return nil, err
	}
	orig, _, err := st.Get(id)
	st.Close()
	if err != nil {
		return nil, err
	}
	if orig.Derivation != nil {
		if why := Reproducible(orig); why != "" {
			return &Reproduction{Original: orig.ID, Molecule: orig.Input.Molecule.Name, Verdict: NotReproducible, Reason: why, Tolerances: []Tolerance{}, Checks: []Check{}, Moved: []Check{}, Code: []CodeDiff{}}, nil
		}
		rep, subs, err := ReproduceDerived(dir, id, req, compute)
		if rep != nil {
			rep.Inputs = subs
		}
		return rep, err
	}
	rep := &Reproduction{Original: orig.ID, Molecule: orig.Input.Molecule.Name, Checks: []Check{}, Moved: []Check{}, Code: DiffCode(orig.Code, CurrentCode())}
	if rep.Code == nil {
		rep.Code = []CodeDiff{}
	}
	for _, k := range []string{KindEnergy, KindDipole, KindQuadrupole, KindLength, KindAngle} {
		rep.Tolerances = append(rep.Tolerances, Tolerances(orig)[k])
	}
	if why := Reproducible(orig); why != "" {
		rep.Verdict, rep.Reason = NotReproducible, why
		return rep, nil
	}
	job := orig.Input
	req.Job = &job
	rec, err := Compute(req, CurrentCode(), []Link{{Relation: Reproduces, ID: orig.ID}}, compute)
	if err != nil {
		return nil, err
	}
	rec.Tags = map[string]string{}
	for k, v := range orig.Tags {
		rec.Tags[k] = v
	}
	if err := rec.Seal(); err != nil {
		return nil, err
	}
	w, err := Open(dir, OpenOptions{Wait: req.Wait, Log: req.Log})
	if err != nil {
		return nil, fmt.Errorf("the rerun finished but could not be stored: %w", err)
	}
	_, err = w.Put(rec)
	if cerr := w.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return nil, err
	}
	rep.New = rec.ID
	var status string
	rep.Checks, rep.Moved, status = Compare(orig, rec)
	switch {
	case status != "":
		rep.Verdict, rep.Reason = Differs, status
	case len(rep.Moved) > 0:
		rep.Verdict = Differs
		rep.Reason = fmt.Sprintf("%d quantit(y/ies) moved beyond tolerance", len(rep.Moved))
	default:
		rep.Verdict = Reproduced
	}
	return rep, nil
}

// Records loads every record matching f, oldest first.
func (s *Store) Records(f Filter) ([]*Record, error) {
	sums, err := s.List(f)
	if err != nil {
		return nil, err
	}
	out := make([]*Record, 0, len(sums))
	for _, sm := range sums {
		r, _, err := s.Get(sm.ID)
		if err != nil {
			return nil, err
		}
		out = append(out, r)
	}
	return out, nil
}

var _ = time.Now

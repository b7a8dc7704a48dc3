package archive

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"sort"
	"time"

	"moltrail/engine"
)

// Derived records.
//
// A derived record holds results that follow by stated arithmetic from
// other archived records — a complete-basis-set extrapolation, a
// composite level, an interaction energy from dimer and monomer records —
// rather than from a calculation of its own. It is an ordinary Record
// (same store, listing, export, verify, trace) with Derivation set:
//
//   - Derivation names the recipe, its formulas (each with its published
//     source) and parameters, and the input records by role and id, with
//     the values taken from each. Values holds the recipe's own numbers.
//   - Lineage has a "derived-from" link to every input, so trace and the
//     lineage walk follow it.
//   - Input describes the derived level in the job's terms (molecule and
//     geometry of the inputs, method, a level name in basis.name with
//     basis.file "derived:<recipe>"); it is not a runnable job.
//   - InputKey is the SHA-256 of the canonical derivation recipe (recipe,
//     formulas, parameters, inputs by role and id) instead of the input
//     job's key, so the same recipe over the same records is the same
//     input. Records without Derivation are hashed exactly as before.
//
// A recipe is a function from input records to results (see Recipe); a
// new one (e.g. counterpoise-corrected interaction energies) registers
// itself in Recipes and needs nothing else from the archive: Derive builds
// the record, ReproduceDerived re-runs the inputs and derives again.

// DerivedFrom is the lineage relation of a derived record to each input.
const DerivedFrom = "derived-from"

// Derivation says how a derived record's results follow from other records.
type Derivation struct {
	Recipe     string            `json:"recipe"`
	Formulas   []Formula         `json:"formulas"`
	Parameters map[string]string `json:"parameters,omitempty"`
	Inputs     []DerivedInput    `json:"inputs"`
	Values     []DerivedValue    `json:"values"`
}

// Formula is one named formula of a recipe with its published source.
type Formula struct {
	Quantity   string `json:"quantity"`
	Name       string `json:"name"`
	Expression string `json:"expression"`
	Source     string `json:"source"`
}

// DerivedInput is one input record and what was taken from it.
type DerivedInput struct {
	Role   string             `json:"role"`
	ID     string             `json:"id"`
	Method string             `json:"method"`
	Basis  string             `json:"basis"`
	Values map[string]float64 `json:"values"`
}

// DerivedValue is one number of the recipe beyond the standard results
// (e.g. the extrapolated correlation energy, the change of the last
// extrapolation step, an interaction energy).
type DerivedValue struct {
	Name  string  `json:"name"`
	Kind  string  `json:"kind"` // a quantity kind (KindEnergy, …), value in its unit
	Value float64 `json:"value"`
	Note  string  `json:"note,omitempty"`
}

// Recipe computes a derived record's results from its input records.
type Recipe interface {
	// Name is the recipe's name, stored in Derivation.Recipe.
	Name() string
	// Derive returns the derivation (formulas, inputs, values), the level
	// (method and level name for Input) and the results.
	Derive(inputs []*Record, params map[string]string) (*Derivation, Level, *engine.Result, error)
}

// Level names a derived level.
type Level struct {
	Method, Name string
}

// Recipes are the known recipes by name.
var Recipes = map[string]Recipe{}

// RegisterRecipe adds a recipe to Recipes.
func RegisterRecipe(r Recipe) { Recipes[r.Name()] = r }

// DerivationKey is the input key of a derived record: the SHA-256 of the
// recipe, formulas, parameters and inputs (role and id, in order).
func DerivationKey(d *Derivation) (string, error) {
	type in struct {
		Role string `json:"role"`
		ID   string `json:"id"`
	}
	k := struct {
		Version    string            `json:"derivation_version"`
		Recipe     string            `json:"recipe"`
		Formulas   []Formula         `json:"formulas"`
		Parameters map[string]string `json:"parameters"`
		Inputs     []in              `json:"inputs"`
	}{Version: "moltrail-derivation/1", Recipe: d.Recipe, Formulas: d.Formulas, Parameters: d.Parameters}
	if k.Parameters == nil {
		k.Parameters = map[string]string{}
	}
	for _, x := range d.Inputs {
		k.Inputs = append(k.Inputs, in{x.Role, x.ID})
	}
	b, err := json.Marshal(k)
	if err != nil {
		return "", fmt.Errorf("derivation cannot be encoded: %v", err)
	}
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:]), nil
}

// inputKey is the record's input key: the job's, or the derivation's.
func (r *Record) inputKey() (string, error) {
	if r.Derivation != nil {
		return DerivationKey(r.Derivation)
	}
	return r.Input.InputKey()
}

// Derive applies the named recipe to the input records (in the recipe's
// order) and returns the sealed derived record. Every input must have
// status converged.
func Derive(recipe string, inputs []*Record, params map[string]string) (*Record, error) {
	rc, ok := Recipes[recipe]
	if !ok {
		return nil, fmt.Errorf("derivation recipe %q is not known (known: %s)", recipe, recipeNames())
	}
	if len(inputs) == 0 {
		return nil, fmt.Errorf("%s: no input records", recipe)
	}
	for _, in := range inputs {
		if in.Status != engine.StatusConverged {
			return nil, fmt.Errorf("%s: record %s has status %s; only converged records can be combined", recipe, short(in.ID), in.Status)
		}
	}
	start := time.Now().UTC()
	d, lvl, res, err := rc.Derive(inputs, params)
	if err != nil {
		return nil, fmt.Errorf("%s: %v", recipe, err)
	}
	d.Recipe = rc.Name()
	if len(params) > 0 {
		d.Parameters = params
	}
	job := inputs[0].Input
	job.Method = lvl.Method
	job.Basis = engine.BasisSpec{Name: lvl.Name, File: "derived:" + rc.Name(), Angular: job.Basis.Angular}
	job.Task = "energy"
	job.Opt = nil
	end := time.Now().UTC()
	host, _ := os.Hostname()
	rec := &Record{Input: job, Code: CurrentCode(), Tags: map[string]string{}, Derivation: d,
		Run: Run{StartUTC: start.Format(time.RFC3339Nano), EndUTC: end.Format(time.RFC3339Nano),
			WallSeconds: end.Sub(start).Seconds(), Host: host, Threads: 1}}
	for _, in := range inputs {
		rec.Lineage = append(rec.Lineage, Link{Relation: DerivedFrom, ID: in.ID})
	}
	res.Status = engine.StatusConverged
	if res.GeometryAngstrom == nil {
		res.GeometryAngstrom = inputs[0].Results.GeometryAngstrom
	}
	rec.Results = *res
	rec.Status = res.Status
	if err := sealAndSign(rec); err != nil {
		return nil, err
	}
	return rec, nil
}

// sealAndSign seals a record this build made and signs it with the
// user's key.
func sealAndSign(rec *Record) error {
	if err := rec.Seal(); err != nil {
		return err
	}
	k, err := UserKey()
	if err != nil {
		return err
	}
	return k.Sign(rec)
}

func recipeNames() string {
	var n []string
	for k := range Recipes {
		n = append(n, k)
	}
	sort.Strings(n)
	s := ""
	for i, x := range n {
		if i > 0 {
			s += ", "
		}
		s += x
	}
	return s
}

// sameGeometry reports why two records are not of the same molecule at
// the same geometry, or "".
func sameGeometry(a, b *Record) string {
	ma, mb := a.Input.Molecule, b.Input.Molecule
	if ma.Charge != mb.Charge || ma.Multiplicity != mb.Multiplicity || len(ma.Atoms) != len(mb.Atoms) {
		return fmt.Sprintf("records %s and %s are not the same molecule (charge, multiplicity or atom count differ)", short(a.ID), short(b.ID))
	}
	ga, gb := a.Results.GeometryAngstrom, b.Results.GeometryAngstrom
	if len(ga) != len(gb) {
		return fmt.Sprintf("records %s and %s have geometries of different size", short(a.ID), short(b.ID))
	}
	for i := range ga {
		if ga[i].Symbol != gb[i].Symbol {
			return fmt.Sprintf("records %s and %s differ in atom %d (%s, %s)", short(a.ID), short(b.ID), i+1, ga[i].Symbol, gb[i].Symbol)
		}
		for k := 0; k < 3; k++ {
			if math.Abs(ga[i].XYZ[k]-gb[i].XYZ[k]) > 1e-8 {
				return fmt.Sprintf("records %s and %s are at different geometries (atom %d differs by %.1e Å)", short(a.ID), short(b.ID), i+1, math.Abs(ga[i].XYZ[k]-gb[i].XYZ[k]))
			}
		}
	}
	return ""
}

// DerivedInputsOf returns the ids of a derived record's inputs ("" roles
// skipped), or nil for an ordinary record.
func DerivedInputsOf(r *Record) []string {
	if r.Derivation == nil {
		return nil
	}
	var ids []string
	for _, in := range r.Derivation.Inputs {
		ids = append(ids, in.ID)
	}
	return ids
}

// ReproduceDerived reproduces a derived record: every input is reproduced
// (derived inputs recursively), the recipe is applied to the new records,
// the new derived record is stored (lineage: reproduces, derived-from the
// new inputs) and its quantities compared with the original's.
func ReproduceDerived(dir, id string, req RunRequest, compute Computer) (*Reproduction, []*Reproduction, error) {
	st, err := Open(dir, OpenOptions{ReadOnly: true, Wait: req.Wait, Log: req.Log})
	if err != nil {
		return nil, nil, err
	}
	orig, _, err := st.Get(id)
	st.Close()
	if err != nil {
		return nil, nil, err
	}
	if orig.Derivation == nil {
		return nil, nil, fmt.Errorf("record %s is not a derived record", short(orig.ID))
	}
	rep := &Reproduction{Original: orig.ID, Molecule: orig.Input.Molecule.Name, Checks: []Check{}, Moved: []Check{}, Code: DiffCode(orig.Code, CurrentCode())}
	if rep.Code == nil {
		rep.Code = []CodeDiff{}
	}
	for _, k := range []string{KindEnergy, KindDipole, KindQuadrupole, KindLength, KindAngle} {
		rep.Tolerances = append(rep.Tolerances, Tolerances(orig)[k])
	}
	var subs []*Reproduction
	var fresh []*Record
	for _, in := range orig.Derivation.Inputs {
		var sub *Reproduction
		st, err := Open(dir, OpenOptions{ReadOnly: true, Wait: req.Wait, Log: req.Log})
		if err != nil {
			return nil, nil, err
		}
		inRec, _, err := st.Get(in.ID)
		st.Close()
		if err != nil {
			rep.Verdict, rep.Reason = NotReproducible, fmt.Sprintf("input record %s (%s) is not in the archive", short(in.ID), in.Role)
			return rep, subs, nil
		}
		if inRec.Derivation != nil {
			s, more, err := ReproduceDerived(dir, in.ID, req, compute)
			if err != nil {
				return nil, nil, err
			}
			subs = append(subs, more...)
			sub = s
		} else {
			sub, err = Reproduce(dir, in.ID, req, compute)
			if err != nil {
				return nil, nil, err
			}
		}
		subs = append(subs, sub)
		if sub.New == "" {
			rep.Verdict, rep.Reason = NotReproducible, fmt.Sprintf("input %s (%s) cannot be reproduced: %s", short(in.ID), in.Role, sub.Reason)
			return rep, subs, nil
		}
		st, err = Open(dir, OpenOptions{ReadOnly: true, Wait: req.Wait, Log: req.Log})
		if err != nil {
			return nil, nil, err
		}
		nr, _, err := st.Get(sub.New)
		st.Close()
		if err != nil {
			return nil, nil, err
		}
		fresh = append(fresh, nr)
	}
	rec, err := Derive(orig.Derivation.Recipe, fresh, orig.Derivation.Parameters)
	if err != nil {
		rep.Verdict, rep.Reason = Differs, "the recipe cannot be applied to the reproduced inputs: "+err.Error()
		return rep, subs, nil
	}
	rec.Lineage = append([]Link{{Relation: Reproduces, ID: orig.ID}}, rec.Lineage...)
	for k, v := range orig.Tags {
		rec.Tags[k] = v
	}
	if err := sealAndSign(rec); err != nil {
		return nil, nil, err
	}
	w, err := Open(dir, OpenOptions{Wait: req.Wait, Log: req.Log})
	if err != nil {
		return nil, nil, fmt.Errorf("the derivation finished but could not be stored: %w", err)
	}
	_, err = w.Put(rec)
	if cerr := w.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return nil, nil, err
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
	return rep, subs, nil
}

package study

import (
	"fmt"

	"moltrail/archive"
	"moltrail/engine"
	"moltrail/engine/molecule"
)

// defaultFiniteDiffStepBohr is the displacement used when a study asks
// for finite-difference gradients without giving the step.
const defaultFiniteDiffStepBohr = 1e-3

// Item is one calculation of a study: a molecule at a level with a task,
// optionally starting from the geometry another item optimised.
type Item struct {
	// Index is the item's position in the plan; an item's dependency
	// always has a smaller index.
	Index    int
	Molecule *Molecule
	Level    *Level
	// Task is "optimize", "energy" or "frequencies".
	Task string
	// From is the optimisation whose final geometry this item uses (nil:
	// the molecule's geometry as given).
	From *Item
	// Implied is true for an optimisation no task asked for that another
	// item needs the geometry of.
	Implied bool
}

// Name is the item's one-line description, e.g.
// "water · mp2/cc-pVTZ · energy at hf/cc-pVDZ geometry".
func (it *Item) Name() string {
	s := it.Molecule.Name + " · " + it.Level.Label + " · " + it.Task
	if it.From != nil {
		s += " at " + it.From.Level.Label + " geometry"
	}
	return s
}

// Job builds the item's engine job at geometry geom (nil: the molecule as
// given in the study).
func (it *Item) Job(geom *molecule.Molecule) (*engine.Job, error) {
	r := it.Level.Request
	if geom == nil {
		geom = it.Molecule.Mol
	}
	r.Molecule = geom
	r.Task = it.Task
	r.AllowCloseAtoms = it.Molecule.allowClose
	r.Frequencies = it.Task == "optimize" && it.Level.opt != nil && it.Level.opt.Frequencies
	j, err := engine.NewJob(r)
	if err == nil && it.Task == "optimize" && it.Level.opt != nil {
		// The study's criteria change the engine's defaults for this method.
		o := *j.Opt
		it.Level.opt.apply(&o)
		if o.GradientMethod == "finite-difference" && o.FiniteDiffStepAU == 0 {
			o.FiniteDiffStepAU = defaultFiniteDiffStepBohr
		}
		r.Opt = &o
		j, err = engine.NewJob(r)
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %v", it.Name(), err)
	}
	return j, nil
}

// Plan is a study expanded into items, dependencies first.
type Plan struct {
	Study *Study
	Items []*Item
	// Part is set for the plan of one shard (see Shard); nil for the whole study.
	Part *Part
}

// Plan expands the study's tasks into items (each molecule × level × task
// once), adds the optimisations that geometry_from needs, and checks that
// every item makes a valid engine job.
func (s *Study) Plan() (*Plan, error) {
	p := &Plan{Study: s}
	seen := map[string]*Item{}
	var add func(m *Molecule, l *Level, task string, from *Item, implied bool) *Item
	add = func(m *Molecule, l *Level, task string, from *Item, implied bool) *Item {
		k := m.Name + "\x00" + l.ID + "\x00" + task + "\x00"
		if from != nil {
			k += from.Level.ID
		}
		if it, ok := seen[k]; ok {
			if !implied {
				it.Implied = false
			}
			return it
		}
		it := &Item{Index: len(p.Items), Molecule: m, Level: l, Task: task, From: from, Implied: implied}
		seen[k] = it
		p.Items = append(p.Items, it)
		return it
	}
	for _, t := range s.Tasks {
		for _, m := range s.taskMolecules(t) {
			for _, l := range s.taskLevels(t) {
				var from *Item
				if t.GeometryFrom != "" {
					from = add(m, s.level(t.GeometryFrom), "optimize", nil, true)
				}
				add(m, l, t.Task, from, false)
			}
		}
	}
	if len(p.Items) == 0 {
		return nil, fmt.Errorf("study %s: the tasks select no calculation", s.Origin)
	}
	for _, it := range p.Items {
		if _, err := it.Job(nil); err != nil {
			return nil, fmt.Errorf("study %s: %v", s.Origin, err)
		}
	}
	return p, nil
}

// GeometryOf returns the molecule m at the final geometry of record rec
// (results.geometry_angstrom), after checking that the atoms agree.
func GeometryOf(rec *archive.Record, m *molecule.Molecule) (*molecule.Molecule, error) {
	g := rec.Results.GeometryAngstrom
	if len(g) != len(m.Atoms) {
		return nil, fmt.Errorf("record %s has %d atoms in its final geometry, the molecule %d", rec.ID[:12], len(g), len(m.Atoms))
	}
	out := m.Clone()
	for i, a := range g {
		if a.Symbol != m.Atoms[i].Symbol {
			return nil, fmt.Errorf("record %s: atom %d is %s, the molecule has %s there", rec.ID[:12], i+1, a.Symbol, m.Atoms[i].Symbol)
		}
		at, err := molecule.NewAtom(a.Symbol, a.XYZ[0]*molecule.AngstromBohr, a.XYZ[1]*molecule.AngstromBohr, a.XYZ[2]*molecule.AngstromBohr)
		if err != nil {
			return nil, fmt.Errorf("record %s: atom %d: %v", rec.ID[:12], i+1, err)
		}
		out.Atoms[i] = at
	}
	return out, nil
}

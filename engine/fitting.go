package engine

import (
	"fmt"
	"math"
	"strings"

	"moltrail/engine/basis"
	"moltrail/engine/integral"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

// FittingSpec asks for density-fitted (resolution-of-the-identity)
// two-electron integrals: the SCF's Coulomb and exchange matrices are built
// from three-centre integrals over an auxiliary basis and the inverted
// Coulomb metric (engine/integral.FittedJK). A job without it uses the
// exact four-centre integrals.
type FittingSpec struct {
	// SCFSet is the auxiliary basis of the Coulomb and exchange fitting,
	// pinned by content like the orbital basis. Its angular type is the
	// orbital basis's (spherical or Cartesian functions alike).
	SCFSet BasisSpec `json:"scf_auxiliary_basis"`
	// MetricCutoff is the relative eigenvalue cut-off of the metric
	// inversion (integral.FitMetric).
	MetricCutoff float64 `json:"metric_eigenvalue_cutoff"`
	// SchwarzThreshold screens the three-centre integrals.
	SchwarzThreshold float64 `json:"three_centre_schwarz_threshold"`
}

// FittingRequest is what a user asks of the fitting: the auxiliary set
// ("" = the library's match for the orbital basis, see AutoFitSet) and the
// thresholds (0 = the defaults).
type FittingRequest struct {
	SCFSet           string
	MetricCutoff     float64
	SchwarzThreshold float64
}

// Defaults of the fitting thresholds.
const (
	DefaultFitMetricCutoff     = integral.DefaultMetricCutoff
	DefaultFitSchwarzThreshold = 1e-12
)

// fitPairs are the library's auxiliary sets for Coulomb and exchange
// fitting by orbital basis (normalised names). The def2 sets and the
// Pople and minimal sets take the universal def2 set.
var fitPairs = map[string]string{
	"cc-pvdz":     "cc-pVDZ-JKFIT",
	"cc-pvtz":     "cc-pVTZ-JKFIT",
	"aug-cc-pvdz": "aug-cc-pVDZ-JKFIT",
	"aug-cc-pvtz": "aug-cc-pVTZ-JKFIT",
	"def2-svp":    "def2-universal-JKFIT",
	"def2-tzvp":   "def2-universal-JKFIT",
	"sto-3g":      "def2-universal-JKFIT",
	"3-21g":       "def2-universal-JKFIT",
	"6-31g":       "def2-universal-JKFIT",
	"6-31g*":      "def2-universal-JKFIT",
	"6-31g**":     "def2-universal-JKFIT",
	"6-31+g*":     "def2-universal-JKFIT",
	"6-311g**":    "def2-universal-JKFIT",
	"6-311++g**":  "def2-universal-JKFIT",
}

// AutoFitSet names the library's Coulomb and exchange fitting set for an
// orbital basis, or "" when the library pairs none with it.
func AutoFitSet(orbital string) string { return fitPairs[basis.Normalize(orbital)] }

// coveringFitSet names a library fitting set of the role that covers every
// element of m ("" when none does), preferring the universal def2 set.
func coveringFitSet(m *molecule.Molecule, role string) string {
	best := ""
	for _, info := range basis.Library() {
		if info.Role != role {
			continue
		}
		set, err := basis.Builtin(info.Name)
		if err != nil || set.Covers(m) != "" {
			continue
		}
		if best == "" || strings.HasPrefix(info.Name, "def2-universal") {
			best = info.Name
		}
	}
	return best
}

// fittingFor resolves a fitting request for the orbital set on molecule m.
func fittingFor(r *FittingRequest, orbital *basis.Set, angular basis.Angular, m *molecule.Molecule) (*FittingSpec, error) {
	name := strings.TrimSpace(r.SCFSet)
	auto := name == "" || strings.EqualFold(name, "auto")
	if auto {
		name = AutoFitSet(orbital.Name)
		if name == "" {
			alt := coveringFitSet(m, "jkfit")
			if alt == "" {
				return nil, fmt.Errorf("the library pairs no Coulomb/exchange fitting set with basis %q and none covers this molecule; give a fitting set of your own by file", orbital.Name)
			}
			return nil, fmt.Errorf("the library pairs no Coulomb/exchange fitting set with basis %q; name one, for example %s", orbital.Name, alt)
		}
	}
	set, err := basis.Load(name)
	if err != nil {
		return nil, fmt.Errorf("fitting set: %v", err)
	}
	switch set.Role {
	case "jkfit", "":
	case "orbital":
		return nil, fmt.Errorf("basis %q is an orbital basis, not a fitting set; the Coulomb/exchange fitting needs a JKFIT set (for %s: %s)", set.Name, orbital.Name, orElse(AutoFitSet(orbital.Name), coveringFitSet(m, "jkfit")))
	default:
		return nil, fmt.Errorf("fitting set %q is a %s set (made for correlation energies); the Coulomb/exchange fitting needs a JKFIT set (for %s: %s)", set.Name, set.Role, orbital.Name, orElse(AutoFitSet(orbital.Name), coveringFitSet(m, "jkfit")))
	}
	if el := set.Covers(m); el != "" {
		how := "the library's match for " + orbital.Name
		if !auto {
			how = "the fitting set given"
		}
		alt := coveringFitSet(m, "jkfit")
		if alt == "" {
			return nil, fmt.Errorf("fitting set %s (%s) has no functions for element %s, and no library fitting set covers this molecule", set.Name, how, el)
		}
		return nil, fmt.Errorf("fitting set %s (%s) has no functions for element %s; %s covers this molecule", set.Name, how, el, alt)
	}
	fs := &FittingSpec{SCFSet: BasisSpec{Name: set.Name, File: set.File, SHA256: set.SHA256, Angular: angular},
		MetricCutoff: DefaultFitMetricCutoff, SchwarzThreshold: DefaultFitSchwarzThreshold}
	if !strings.HasPrefix(set.File, "builtin:") {
		raw, err := basis.RawBytes(set)
		if err != nil {
			return nil, err
		}
		fs.SCFSet.Inline = raw
	}
	if r.MetricCutoff != 0 {
		fs.MetricCutoff = r.MetricCutoff
	}
	if r.SchwarzThreshold != 0 {
		fs.SchwarzThreshold = r.SchwarzThreshold
	}
	return fs, fs.validate()
}

func orElse(a, b string) string {
	if a != "" {
		return a
	}
	return b
}

func (f *FittingSpec) validate() error {
	switch {
	case !(f.MetricCutoff > 0 && f.MetricCutoff <= 1e-4):
		return fmt.Errorf("density_fitting.metric_eigenvalue_cutoff %g is outside (0, 1e-4]", f.MetricCutoff)
	case !(f.SchwarzThreshold > 0 && f.SchwarzThreshold <= 1e-8):
		return fmt.Errorf("density_fitting.three_centre_schwarz_threshold %g is outside (0, 1e-8]", f.SchwarzThreshold)
	case f.SCFSet.Name == "":
		return fmt.Errorf("density_fitting.scf_auxiliary_basis.name is missing")
	case f.SCFSet.Angular != basis.Spherical && f.SCFSet.Angular != basis.Cartesian:
		return fmt.Errorf("density_fitting.scf_auxiliary_basis.angular %q is not spherical or cartesian", f.SCFSet.Angular)
	}
	return nil
}

// FittingInfo says in the result how the fitted integrals were made.
type FittingInfo struct {
	// SCFSet names the auxiliary set; StandardPairing says whether it is
	// the library's match for the orbital basis (AutoFitSet).
	SCFSet          string `json:"scf_auxiliary_basis"`
	StandardPairing bool   `json:"standard_pairing"`
	AuxFunctions    int    `json:"auxiliary_functions"`
	FittedFunctions int    `json:"fitted_functions"`
	// Metric is "cholesky" or "eigen" (integral.FitMetric), with the
	// condition estimate and the number of combinations removed.
	Metric          string  `json:"metric_inversion"`
	MetricCondition float64 `json:"metric_condition_estimate"`
	MetricRemoved   int     `json:"metric_removed"`
	// Integrals says which parts of the calculation used fitted integrals.
	Integrals string `json:"fitted_parts"`
}

// fittedJK prepares the fitted Coulomb/exchange builder of a job on mb and
// hands it to the SCF options.
func fittedJK(job *Job, mol *molecule.Molecule, mb *basis.Molecular, so *scf.Options, o RunOptions) (*FittingInfo, error) {
	fs := job.Fitting
	set, err := fs.SCFSet.resolve()
	if err != nil {
		return nil, fmt.Errorf("fitting set: %v", err)
	}
	amb, err := basis.Build(set, mol, fs.SCFSet.Angular)
	if err != nil {
		return nil, fmt.Errorf("fitting set: %v", err)
	}
	eri, err := integral.NewERI(mb, integral.Options{SchwarzThreshold: so.SchwarzThreshold, Threads: so.Threads, MemoryBudgetBytes: so.MemoryBudgetBytes})
	if err != nil {
		return nil, err
	}
	tc, err := integral.NewThreeCentre(eri, amb, integral.ThreeCentreOptions{SchwarzThreshold: fs.SchwarzThreshold, Threads: so.Threads})
	if err != nil {
		return nil, err
	}
	fj, err := integral.NewFittedJK(tc, integral.FitOptions{MetricCutoff: fs.MetricCutoff, Threads: so.Threads, MemoryBudgetBytes: so.MemoryBudgetBytes})
	if err != nil {
		return nil, fmt.Errorf("method %s: %v", job.Method, err)
	}
	st := fj.Stats()
	mode := fmt.Sprintf("held in memory, %s", FormatMemorySize(st.StoredBytes))
	if !st.InCore {
		mode = fmt.Sprintf("recomputed in blocks at every build (holding them would take %s, the budget is %s; a pass holds %s)",
			FormatMemorySize(8*int64(st.PairRows)*int64(st.FittedFunctions)), FormatMemorySize(st.MemoryBudgetBytes), FormatMemorySize(st.BlockBytes))
	}
	o.logf("  fitted Coulomb/exchange: %s, %d auxiliary functions, metric: %s; fitted integrals %s\n", set.Name, st.AuxFunctions, fj.Metric(), mode)
	so.ERI, so.JK = eri, fj
	return &FittingInfo{
		SCFSet: set.Name, StandardPairing: strings.EqualFold(AutoFitSet(job.Basis.Name), set.Name),
		AuxFunctions: st.AuxFunctions, FittedFunctions: st.FittedFunctions,
		Metric: st.MetricMethod, MetricCondition: roundSig(st.MetricCondition), MetricRemoved: st.MetricRemoved,
		Integrals: "SCF Coulomb and exchange",
	}, nil
}

// roundSig keeps three significant digits (a condition estimate is no
// more precise than that).
func roundSig(x float64) float64 {
	if x == 0 || math.IsInf(x, 0) || math.IsNaN(x) {
		return x
	}
	e := math.Pow(10, math.Floor(math.Log10(math.Abs(x)))-2)
	return math.Round(x/e) * e
}

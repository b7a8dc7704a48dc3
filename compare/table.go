package compare

// Table is the whole outcome of comparing archived records with one
// reference set. It is plain data: the terminal, CSV, JSON and PDF
// renderings are all drawn from it, and its JSON encoding is the
// `moltrail compare --json` output.
//
// Units: every numeric field is in the natural unit named beside it
// (Deviation.Unit, Stats.Unit): pm for lengths, degree for angles, D for
// dipoles, D·Å for quadrupoles, kJ/mol for energies.
type Table struct {
	RefSet RefSetInfo `json:"reference_set"`
	// Levels are the method/basis combinations found, in display order.
	Levels []Level `json:"levels"`
	// Records names the level of every record considered (matched to a
	// molecule of the set) and where its geometry came from, by record id.
	Records []RecordInfo `json:"records"`
	// Picked says which record was used for each molecule × level × purpose and why.
	Picked     []Pick      `json:"picked"`
	Deviations []Deviation `json:"deviations"`
	// Stats has one row per level × quantity kind that has at least one deviation.
	Stats []Stats `json:"statistics"`
	// LevelDiffs compare every pair of levels over the entries both have.
	LevelDiffs []LevelDiff `json:"level_differences"`
	// Cautions are the individual warnings; Legend explains every code used.
	Cautions []Caution     `json:"cautions"`
	Legend   []CautionInfo `json:"caution_legend"`
	// Excluded are records that matched an entry but were not used, with the reason.
	Excluded []Excluded `json:"excluded"`
	// Unmatched are reference entries for which no usable record was found, per level.
	Unmatched []Unmatched `json:"unmatched"`
	// Notes are general remarks every reader should see (model limitations, method).
	Notes []string `json:"notes"`
	// Settings records how the table was made (thresholds, bootstrap size and seed).
	Settings Settings `json:"settings"`
	// ReferenceRecords are the archived records reference values were
	// taken from (Entry.Records), in entry order: cited, never compared.
	ReferenceRecords []string `json:"reference_records,omitempty"`
}

// Flagged counts the deviations that carry at least one caution.
func (t *Table) Flagged() int {
	n := 0
	for _, d := range t.Deviations {
		if len(d.Cautions) > 0 {
			n++
		}
	}
	return n
}

// RefSetInfo identifies the reference set used.
type RefSetInfo struct {
	Name        string `json:"name"`
	Description string `json:"description"`
	Source      string `json:"source"`
	// Origin is "builtin:NAME" or the file path the set was read from.
	Origin string `json:"origin"`
	// SHA256 is the hex SHA-256 of the set file's bytes.
	SHA256  string `json:"sha256"`
	Entries int    `json:"entries"`
}

// Level is one method/basis combination.
type Level struct {
	// Label is the display name in the trade's notation (archive.LevelLabel),
	// e.g. "MP2(fc)/cc-pVTZ", "UHF/6-31G*" or "MP2(fc)/cc-pVDZ//HF/6-31G*".
	Label     string `json:"label"`
	Method    string `json:"method"`
	Reference string `json:"reference,omitempty"`
	Basis     string `json:"basis"`
	// GeometryLevel is the level that optimised the structure the records
	// of this level were computed on, when that is another level (the B of A//B).
	GeometryLevel string `json:"geometry_level,omitempty"`
	FrozenCore    bool   `json:"frozen_core,omitempty"`
	// SCFOf is set for an SCF view: the level of the correlated records
	// whose SCF density's moments stand here.
	SCFOf string `json:"scf_density_of,omitempty"`
	// Diffuse says whether the basis has diffuse functions (judged from its name).
	Diffuse bool `json:"diffuse"`
}

// RecordInfo is one record considered by the comparison.
type RecordInfo struct {
	RecordID string `json:"record_id"`
	// Level is the record's own level label (archive.LevelLabel).
	Level string `json:"level"`
	// Geometry says where the record's geometry came from, in words that
	// complete "the geometry …" (archive.GeometryWords).
	Geometry string `json:"geometry"`
	// GeometryKind is archive.GeometryOptimised, GeometryInput, GeometryBorrowed or GeometryUnresolved.
	GeometryKind string `json:"geometry_kind"`
}

// Purpose values of a Pick: structures need the level's own optimised
// geometry; properties (moments) and energies come from records whose
// geometry the property-geometry rule admits; energies never from an SCF
// view of a correlated record.
const (
	PurposeStructure  = "structure"
	PurposeProperties = "properties"
	PurposeEnergy     = "energy"
)

// Property-geometry rules: which geometry properties and energies are
// compared at.
const (
	// GeometryRuleOptimised: each level's optimised structure (its own
	// optimisation, or a single point on another level's, labelled A//B).
	GeometryRuleOptimised = "optimised"
	// GeometryRuleInput: single points at the geometry given as input
	// (typically the reference geometry).
	GeometryRuleInput = "input"
)

// Pick says which record stood for one molecule at one level.
type Pick struct {
	Molecule string `json:"molecule"`
	Formula  string `json:"formula"`
	Level    string `json:"level"`
	Purpose  string `json:"purpose"`
	RecordID string `json:"record_id"`
	// DateUTC is the record's run start time (RFC 3339), empty if unknown.
	DateUTC string `json:"date_utc"`
	// Candidates is how many matching, usable records there were to choose from.
	Candidates int `json:"candidates"`
	// Reason says in words why this record was chosen.
	Reason string `json:"reason"`
}

// Deviation is one reference entry against one computed value.
type Deviation struct {
	EntryID  string `json:"entry_id"`
	Level    string `json:"level"`
	RecordID string `json:"record_id"`
	Molecule string `json:"molecule"`
	Formula  string `json:"formula"`
	// Quantity is the display label, e.g. "r(C–O)", "∠(H–O–H)", "μ", "μ(C→O)", "Θzz".
	Quantity string `json:"quantity"`
	// Kind is the quantity kind (KindBondLength, ...); statistics group by it.
	Kind string `json:"kind"`
	// Unit is the natural unit of Reference, Uncertainty, Computed and Signed.
	Unit        string  `json:"unit"`
	Reference   float64 `json:"reference"`
	Uncertainty float64 `json:"uncertainty"`
	// RefKind is "experiment" or "theory"; RefSource the publication or handbook.
	RefKind    string  `json:"reference_kind"`
	RefSource  string  `json:"reference_source"`
	FromMemory bool    `json:"reference_from_memory"`
	Computed   float64 `json:"computed"`
	// Signed is computed − reference.
	Signed float64 `json:"signed_deviation"`
	// Relative is Signed/|Reference|, only where that is meaningful (nil otherwise).
	Relative *float64 `json:"relative_deviation,omitempty"`
	// Cautions are the codes of the cautions attached to this deviation.
	Cautions []string `json:"cautions"`
}

// Stats summarises the deviations of one level for one quantity kind.
type Stats struct {
	Level string `json:"level"`
	Kind  string `json:"kind"`
	Unit  string `json:"unit"`
	N     int    `json:"n"`
	// MSE is the mean signed error (accuracy); SD the sample standard
	// deviation of the signed errors (precision, n−1 denominator; 0 when N = 1).
	MSE float64 `json:"mean_signed_error"`
	SD  float64 `json:"standard_deviation"`
	MAE float64 `json:"mean_absolute_error"`
	RMS float64 `json:"rms_error"`
	// MaxAbs is the largest |deviation|; MaxSigned its signed value; MaxAt where.
	MaxAbs    float64 `json:"max_abs_error"`
	MaxSigned float64 `json:"max_signed_error"`
	MaxAt     string  `json:"max_at"`
	// CILow/CIHigh bound the bootstrap confidence interval of the MSE (nil when N < 3).
	CILow      *float64 `json:"mse_ci_low,omitempty"`
	CIHigh     *float64 `json:"mse_ci_high,omitempty"`
	Confidence float64  `json:"ci_confidence"`
	// Flagged counts deviations of this row that carry at least one caution.
	Flagged int `json:"flagged"`
}

// LevelDiff compares two levels over the entries of one kind that both have.
type LevelDiff struct {
	LevelA string `json:"level_a"`
	LevelB string `json:"level_b"`
	Kind   string `json:"kind"`
	Unit   string `json:"unit"`
	N      int    `json:"n_common"`
	// MeanDiff is the mean over common entries of (computed A − computed B),
	// i.e. MSE(A) − MSE(B) on the common entries.
	MeanDiff float64  `json:"mean_difference"`
	CILow    *float64 `json:"mean_difference_ci_low,omitempty"`
	CIHigh   *float64 `json:"mean_difference_ci_high,omitempty"`
	// MAEDiff is MAE(A) − MAE(B) on the common entries (negative: A closer).
	MAEDiff     float64  `json:"mae_difference"`
	MAECILow    *float64 `json:"mae_difference_ci_low,omitempty"`
	MAECIHigh   *float64 `json:"mae_difference_ci_high,omitempty"`
	Confidence  float64  `json:"ci_confidence"`
	Significant bool     `json:"significant"`
	// Verdict says in words what the numbers allow one to conclude.
	Verdict string `json:"verdict"`
}

// Caution is one warning about one number (or one record).
type Caution struct {
	Code     string `json:"code"`
	Title    string `json:"title"`
	Explain  string `json:"explanation"`
	EntryID  string `json:"entry_id,omitempty"`
	RecordID string `json:"record_id,omitempty"`
	Molecule string `json:"molecule,omitempty"`
	Quantity string `json:"quantity,omitempty"`
	Level    string `json:"level,omitempty"`
	// Detail gives the numbers behind the caution (e.g. the cancellation ratio).
	Detail string `json:"detail"`
	// Ratio is the cancellation ratio where Code is CodeCancel.
	Ratio *float64 `json:"ratio,omitempty"`
}

// CautionInfo explains one caution code.
type CautionInfo struct {
	Code    string `json:"code"`
	Title   string `json:"title"`
	Explain string `json:"explanation"`
}

// Excluded is a record that was not used, with the reason.
type Excluded struct {
	RecordID string `json:"record_id"`
	Molecule string `json:"molecule"`
	Formula  string `json:"formula"`
	Level    string `json:"level"`
	Status   string `json:"status"`
	Reason   string `json:"reason"`
}

// Unmatched is a reference entry with no usable record at a level.
type Unmatched struct {
	EntryID  string `json:"entry_id"`
	Molecule string `json:"molecule"`
	Quantity string `json:"quantity"`
	Level    string `json:"level"`
	Reason   string `json:"reason"`
}

// Settings records the thresholds and bootstrap parameters used.
type Settings struct {
	BootstrapSamples int     `json:"bootstrap_samples"`
	BootstrapSeed    uint64  `json:"bootstrap_seed"`
	Confidence       float64 `json:"ci_confidence"`
	DipoleFloorDebye float64 `json:"dipole_floor_debye"`
	QuadFloorDA      float64 `json:"quadrupole_floor_debye_angstrom"`
	EnergyFloorKJ    float64 `json:"energy_difference_floor_kj_per_mol"`
	// CancelDipole and CancelQuad are the cancellation ratios above which a moment is flagged.
	CancelDipole float64 `json:"cancellation_ratio_dipole"`
	CancelQuad   float64 `json:"cancellation_ratio_quadrupole"`
	// PropertyGeometry is the property-geometry rule applied.
	PropertyGeometry string `json:"property_geometry"`
	// SCFMoments says whether SCF views of correlated records were compared.
	SCFMoments bool `json:"scf_moments_of_correlated_levels,omitempty"`
}

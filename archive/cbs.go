package archive

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"moltrail/engine"
)

// Recipe names.
const (
	RecipeCBS       = "cbs-energy"
	RecipeComposite = "composite-energy"
)

func init() {
	RegisterRecipe(cbsRecipe{})
	RegisterRecipe(compositeRecipe{})
}

// Published formulas of the complete-basis-set recipe.
var (
	FormulaCorrX3 = Formula{Quantity: "correlation energy", Name: "two-point inverse-power (X⁻³)",
		Expression: "E_corr(∞) = (Y^α E_corr(Y) − X^α E_corr(X)) / (Y^α − X^α), α = 3, X < Y cardinal numbers",
		Source:     "T. Helgaker, W. Klopper, H. Koch and J. Noga, J. Chem. Phys. 106, 9639 (1997); A. Halkier et al., Chem. Phys. Lett. 286, 243 (1998)"}
	FormulaSCFKartonMartin = Formula{Quantity: "SCF energy", Name: "two-point (X+1)·exp(−9√X)",
		Expression: "E_SCF(X) = E_SCF(∞) + A (X+1) exp(−9√X), solved for E_SCF(∞) from X < Y",
		Source:     "A. Karton and J. M. L. Martin, Theor. Chem. Acc. 115, 330 (2006)"}
	FormulaSCFExp3 = Formula{Quantity: "SCF energy", Name: "three-point exponential",
		Expression: "E_SCF(X) = E_SCF(∞) + B exp(−C X) for consecutive X, Y = X+1, Z = X+2: E_SCF(∞) = (E_X E_Z − E_Y²) / (E_X − 2 E_Y + E_Z)",
		Source:     "D. Feller, J. Chem. Phys. 96, 6104 (1992); 98, 7059 (1993)"}
	FormulaSCFLargest = Formula{Quantity: "SCF energy", Name: "largest basis",
		Expression: "E_SCF(∞) ≈ E_SCF(Y), the largest basis, not extrapolated",
		Source:     "common practice, no source"}
	FormulaAdditive = Formula{Quantity: "total energy", Name: "additive composite level",
		Expression: "E = E(base) + Σ_k [E(high_k) − E(low_k)], each difference at one basis and geometry",
		Source:     "the additivity assumption of focal-point and composite schemes, e.g. A. G. Császár, W. D. Allen and H. F. Schaefer, J. Chem. Phys. 108, 9751 (1998)"}
)

// SCF treatments of the complete-basis-set recipe (parameter "scf").
var cbsSCF = map[string]Formula{"karton-martin": FormulaSCFKartonMartin, "exponential": FormulaSCFExp3, "largest": FormulaSCFLargest}

// CardinalOf returns the cardinal number X of a correlation-consistent
// basis name (cc-pVXZ, aug-cc-pVXZ, cc-pCVXZ, …: D = 2, T = 3, Q = 4, 5,
// 6) and the family name with X replaced by "X".
func CardinalOf(name string) (int, string, error) {
	n := strings.ToLower(strings.TrimSpace(name))
	i := strings.Index(n, "cc-p")
	if i < 0 || !strings.HasSuffix(n, "z") || len(n) < i+7 {
		return 0, "", fmt.Errorf("basis %q is not a correlation-consistent cc-pVXZ set", name)
	}
	x := n[len(n)-2]
	card := map[byte]int{'d': 2, 't': 3, 'q': 4, '5': 5, '6': 6}[x]
	if card == 0 {
		return 0, "", fmt.Errorf("basis %q has no cardinal number D, T, Q, 5 or 6", name)
	}
	return card, n[:len(n)-2] + "x" + "z", nil
}

type cbsRecipe struct{}

func (cbsRecipe) Name() string { return RecipeCBS }

// Derive: inputs at two or three cardinal numbers of one family, same
// method, frozen core, molecule and geometry. Parameters: "scf"
// (karton-martin, the default with two inputs; exponential, the default
// with three consecutive; largest) and "correlation_exponent" (default 3).
func (cbsRecipe) Derive(in []*Record, params map[string]string) (*Derivation, Level, *engine.Result, error) {
	if len(in) != 2 && len(in) != 3 {
		return nil, Level{}, nil, fmt.Errorf("give two or three records (at different cardinal numbers), not %d", len(in))
	}
	type point struct {
		r         *Record
		x         int
		scf, corr float64
	}
	var pts []point
	var family string
	for i, r := range in {
		x, fam, err := CardinalOf(r.Input.Basis.Name)
		if err != nil {
			return nil, Level{}, nil, fmt.Errorf("record %s: %v", short(r.ID), err)
		}
		if r.Results.CorrelationEnergyHartree == nil {
			return nil, Level{}, nil, fmt.Errorf("record %s (%s) has no correlation energy", short(r.ID), r.Input.Method)
		}
		if i == 0 {
			family = fam
		} else {
			if fam != family {
				return nil, Level{}, nil, fmt.Errorf("records %s and %s use different basis families (%s, %s)", short(in[0].ID), short(r.ID), in[0].Input.Basis.Name, r.Input.Basis.Name)
			}
			if r.Input.Method != in[0].Input.Method {
				return nil, Level{}, nil, fmt.Errorf("records %s and %s are at different methods (%s, %s)", short(in[0].ID), short(r.ID), in[0].Input.Method, r.Input.Method)
			}
			if fc(r) != fc(in[0]) {
				return nil, Level{}, nil, fmt.Errorf("records %s and %s differ in frozen core", short(in[0].ID), short(r.ID))
			}
			if why := sameGeometry(in[0], r); why != "" {
				return nil, Level{}, nil, fmt.Errorf("%s", why)
			}
		}
		pts = append(pts, point{r, x, r.Results.SCFEnergyHartree, *r.Results.CorrelationEnergyHartree})
	}
	sort.SliceStable(pts, func(a, b int) bool { return pts[a].x < pts[b].x })
	for i := 1; i < len(pts); i++ {
		if pts[i].x == pts[i-1].x {
			return nil, Level{}, nil, fmt.Errorf("records %s and %s have the same cardinal number", short(pts[i-1].r.ID), short(pts[i].r.ID))
		}
	}
	alpha := 3.0
	if s, ok := params["correlation_exponent"]; ok {
		a, err := strconv.ParseFloat(s, 64)
		if err != nil || !(a > 0 && a < 10) {
			return nil, Level{}, nil, fmt.Errorf("correlation_exponent %q must be a number between 0 and 10", s)
		}
		alpha = a
	}
	scheme := "karton-martin"
	if len(pts) == 3 {
		scheme = "exponential"
	}
	if s, ok := params["scf"]; ok {
		if _, ok := cbsSCF[s]; !ok {
			return nil, Level{}, nil, fmt.Errorf("scf treatment %q is not known (karton-martin, exponential, largest)", s)
		}
		scheme = s
	}
	X, Y := pts[len(pts)-2], pts[len(pts)-1]
	corr := CorrelationX3(float64(X.x), X.corr, float64(Y.x), Y.corr, alpha)
	var scf float64
	switch scheme {
	case "karton-martin":
		scf = SCFKartonMartin(float64(X.x), X.scf, float64(Y.x), Y.scf)
	case "largest":
		scf = Y.scf
	case "exponential":
		if len(pts) != 3 || pts[1].x != pts[0].x+1 || pts[2].x != pts[1].x+1 {
			return nil, Level{}, nil, fmt.Errorf("the three-point exponential SCF formula needs three consecutive cardinal numbers")
		}
		var err error
		if scf, err = SCFExponential3(pts[0].scf, pts[1].scf, pts[2].scf); err != nil {
			return nil, Level{}, nil, err
		}
	}
	fCorr := FormulaCorrX3
	if alpha != 3 {
		fCorr.Name = fmt.Sprintf("two-point inverse-power (X^-%g)", alpha)
		fCorr.Expression = strings.Replace(fCorr.Expression, "α = 3", fmt.Sprintf("α = %g", alpha), 1)
	}
	d := &Derivation{Formulas: []Formula{cbsSCF[scheme], fCorr}}
	var names []string
	for _, p := range pts {
		role := fmt.Sprintf("X=%d", p.x)
		d.Inputs = append(d.Inputs, DerivedInput{Role: role, ID: p.r.ID, Method: p.r.Input.Method, Basis: p.r.Input.Basis.Name,
			Values: map[string]float64{"scf_energy_hartree": p.scf, "correlation_energy_hartree": p.corr}})
		names = append(names, p.r.Input.Basis.Name)
	}
	total := scf + corr
	change := total - (Y.scf + Y.corr)
	d.Values = []DerivedValue{
		{Name: "scf_cbs_hartree", Kind: KindEnergy, Value: scf},
		{Name: "correlation_cbs_hartree", Kind: KindEnergy, Value: corr},
		{Name: "extrapolation_change_hartree", Kind: KindEnergy, Value: change, Note: "CBS total minus the total at the largest basis: the last extrapolation step's change"},
	}
	res := &engine.Result{EnergyHartree: total, SCFEnergyHartree: scf, CorrelationEnergyHartree: &corr,
		NuclearRepulsionHartree: Y.r.Results.NuclearRepulsionHartree, GeometryAngstrom: Y.r.Results.GeometryAngstrom, SCFIterations: []engine.SCFIteration{},
		Notes: []string{fmt.Sprintf("complete-basis-set estimate from %s (%s SCF, %s correlation); the last extrapolation step changed the total by %.2e Eh", strings.Join(names, ", "), cbsSCF[scheme].Name, fCorr.Name, change)}}
	return d, Level{Method: Y.r.Input.Method, Name: "CBS(" + strings.Join(names, ",") + ")"}, res, nil
}

func fc(r *Record) bool { return r.Input.Correlation != nil && r.Input.Correlation.FrozenCore }

// CorrelationX3 is the two-point inverse-power extrapolation of
// correlation energies ex at cardinal x and ey at y (α = 3 is the
// published X⁻³ formula).
func CorrelationX3(x, ex, y, ey, alpha float64) float64 {
	px, py := math.Pow(x, alpha), math.Pow(y, alpha)
	return (py*ey - px*ex) / (py - px)
}

// SCFKartonMartin is the two-point extrapolation of SCF energies with
// E(X) = E(∞) + A (X+1) exp(−9√X).
func SCFKartonMartin(x, ex, y, ey float64) float64 {
	fx := (x + 1) * math.Exp(-9*math.Sqrt(x))
	fy := (y + 1) * math.Exp(-9*math.Sqrt(y))
	return (ey*fx - ex*fy) / (fx - fy)
}

// SCFExponential3 is the three-point exponential extrapolation of SCF
// energies at consecutive cardinal numbers.
func SCFExponential3(e1, e2, e3 float64) (float64, error) {
	den := e1 - 2*e2 + e3
	if den == 0 || (e2-e1)*(e3-e2) <= 0 {
		return 0, fmt.Errorf("the three SCF energies (%.10f, %.10f, %.10f) do not converge monotonically; the exponential formula does not apply", e1, e2, e3)
	}
	return (e1*e3 - e2*e2) / den, nil
}

type compositeRecipe struct{}

func (compositeRecipe) Name() string { return RecipeComposite }

// Derive: inputs base, high₁, low₁, high₂, low₂, … all of one molecule at
// one geometry; each high/low pair shares basis and frozen core.
func (compositeRecipe) Derive(in []*Record, params map[string]string) (*Derivation, Level, *engine.Result, error) {
	if len(in) < 3 || len(in)%2 == 0 {
		return nil, Level{}, nil, fmt.Errorf("give a base record and pairs of (higher, lower) method records, %d records given", len(in))
	}
	if len(params) > 0 {
		return nil, Level{}, nil, fmt.Errorf("the composite recipe takes no parameters")
	}
	base := in[0]
	d := &Derivation{Formulas: []Formula{FormulaAdditive}}
	d.Inputs = append(d.Inputs, DerivedInput{Role: "base", ID: base.ID, Method: base.Input.Method, Basis: base.Input.Basis.Name,
		Values: map[string]float64{"energy_hartree": base.Results.EnergyHartree}})
	total := base.Results.EnergyHartree
	name := base.Input.Method + "/" + base.Input.Basis.Name
	method := base.Input.Method
	for k := 1; k < len(in); k += 2 {
		hi, lo := in[k], in[k+1]
		for _, r := range []*Record{hi, lo} {
			if why := sameGeometry(base, r); why != "" {
				return nil, Level{}, nil, fmt.Errorf("%s", why)
			}
		}
		if hi.Input.Basis.Name != lo.Input.Basis.Name || hi.Input.Basis.SHA256 != lo.Input.Basis.SHA256 || hi.Input.Basis.Angular != lo.Input.Basis.Angular {
			return nil, Level{}, nil, fmt.Errorf("records %s and %s of one difference are in different basis sets (%s, %s)", short(hi.ID), short(lo.ID), hi.Input.Basis.Name, lo.Input.Basis.Name)
		}
		if fc(hi) != fc(lo) {
			return nil, Level{}, nil, fmt.Errorf("records %s and %s of one difference differ in frozen core", short(hi.ID), short(lo.ID))
		}
		if hi.Input.Method == lo.Input.Method {
			return nil, Level{}, nil, fmt.Errorf("records %s and %s are at the same method %s: their difference is no correction", short(hi.ID), short(lo.ID), hi.Input.Method)
		}
		delta := hi.Results.EnergyHartree - lo.Results.EnergyHartree
		total += delta
		n := (k + 1) / 2
		d.Inputs = append(d.Inputs,
			DerivedInput{Role: fmt.Sprintf("higher-%d", n), ID: hi.ID, Method: hi.Input.Method, Basis: hi.Input.Basis.Name, Values: map[string]float64{"energy_hartree": hi.Results.EnergyHartree}},
			DerivedInput{Role: fmt.Sprintf("lower-%d", n), ID: lo.ID, Method: lo.Input.Method, Basis: lo.Input.Basis.Name, Values: map[string]float64{"energy_hartree": lo.Results.EnergyHartree}})
		d.Values = append(d.Values, DerivedValue{Name: fmt.Sprintf("correction_%d_hartree", n), Kind: KindEnergy, Value: delta,
			Note: fmt.Sprintf("%s − %s in %s", hi.Input.Method, lo.Input.Method, hi.Input.Basis.Name)})
		name += fmt.Sprintf(" + [%s − %s]/%s", hi.Input.Method, lo.Input.Method, hi.Input.Basis.Name)
		method = hi.Input.Method
	}
	corr := total - base.Results.SCFEnergyHartree
	res := &engine.Result{EnergyHartree: total, SCFEnergyHartree: base.Results.SCFEnergyHartree, CorrelationEnergyHartree: &corr,
		NuclearRepulsionHartree: base.Results.NuclearRepulsionHartree, GeometryAngstrom: base.Results.GeometryAngstrom, SCFIterations: []engine.SCFIteration{},
		Notes: []string{"composite level " + name + ": assumes the corrections are additive"}}
	return d, Level{Method: method, Name: name}, res, nil
}

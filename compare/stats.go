package compare

import (
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"sort"

	"gonum.org/v1/gonum/stat"
)

// Summary holds the descriptive statistics of a list of signed deviations.
type Summary struct {
	N             int
	MSE, SD       float64
	MAE, RMS      float64
	MaxAbs        float64
	MaxSigned     float64
	MaxIndex      int
	CILow, CIHigh float64
	HasCI         bool
}

// Summarise computes N, mean signed error, sample standard deviation (n−1;
// 0 for one value), mean absolute error, RMS, the largest |deviation| and,
// for three or more values, the percentile bootstrap interval of the mean
// with the given number of resamples, confidence and random stream.
func Summarise(dev []float64, samples int, confidence float64, rng *rand.Rand) Summary {
	s := Summary{N: len(dev), MaxIndex: -1}
	if s.N == 0 {
		return s
	}
	s.MSE = stat.Mean(dev, nil)
	if s.N > 1 {
		s.SD = stat.StdDev(dev, nil)
	}
	sumAbs, sumSq := 0.0, 0.0
	for i, d := range dev {
		a := math.Abs(d)
		sumAbs += a
		sumSq += d * d
		if a > s.MaxAbs || s.MaxIndex < 0 {
			s.MaxAbs, s.MaxSigned, s.MaxIndex = a, d, i
		}
	}
	s.MAE = sumAbs / float64(s.N)
	s.RMS = math.Sqrt(sumSq / float64(s.N))
	if s.N >= 3 && samples > 0 && rng != nil {
		s.CILow, s.CIHigh = BootstrapMeanCI(dev, samples, confidence, rng)
		s.HasCI = true
	}
	return s
}

// BootstrapMeanCI returns the percentile bootstrap interval of the mean of
// x: samples resamples of len(x) values drawn with replacement, the
// (1−c)/2 and (1+c)/2 empirical quantiles of their means.
func BootstrapMeanCI(x []float64, samples int, confidence float64, rng *rand.Rand) (lo, hi float64) {
	n := len(x)
	means := make([]float64, samples)
	for b := range means {
		s := 0.0
		for i := 0; i < n; i++ {
			s += x[rng.IntN(n)]
		}
		means[b] = s / float64(n)
	}
	sort.Float64s(means)
	lo = stat.Quantile((1-confidence)/2, stat.Empirical, means, nil)
	hi = stat.Quantile((1+confidence)/2, stat.Empirical, means, nil)
	return lo, hi
}

// streamFor gives each statistics row its own deterministic random stream.
func streamFor(seed uint64, parts ...string) *rand.Rand {
	h := fnv.New64a()
	for _, p := range parts {
		h.Write([]byte(p))
		h.Write([]byte{0})
	}
	return rand.New(rand.NewPCG(seed, h.Sum64()))
}

var kindOrder = map[string]int{KindBondLength: 0, KindAngle: 1, KindDipoleNorm: 2, KindDipoleAxis: 3, KindQuadrupole: 4, KindEnergy: 5, KindEnergyDelta: 6}

func (t *Table) levelIndex() map[string]int {
	m := map[string]int{}
	for i, l := range t.Levels {
		m[l.Label] = i
	}
	return m
}

// statistics fills t.Stats: one row per level × kind.
func (t *Table) statistics(o Options) {
	type key struct {
		level string
		kind  string
	}
	rows := map[key][]int{}
	for i, d := range t.Deviations {
		k := key{d.Level, d.Kind}
		rows[k] = append(rows[k], i)
	}
	li := t.levelIndex()
	var keys []key
	for k := range rows {
		keys = append(keys, k)
	}
	sort.Slice(keys, func(a, b int) bool {
		if li[keys[a].level] != li[keys[b].level] {
			return li[keys[a].level] < li[keys[b].level]
		}
		return kindOrder[keys[a].kind] < kindOrder[keys[b].kind]
	})
	for _, k := range keys {
		idx := rows[k]
		dev := make([]float64, len(idx))
		flagged := 0
		for j, i := range idx {
			dev[j] = t.Deviations[i].Signed
			if len(t.Deviations[i].Cautions) > 0 {
				flagged++
			}
		}
		s := Summarise(dev, o.BootstrapSamples, o.Confidence, streamFor(o.Seed, "stats", k.level, k.kind))
		at := t.Deviations[idx[s.MaxIndex]]
		row := Stats{Level: k.level, Kind: k.kind, Unit: NaturalUnit(k.kind), N: s.N, MSE: s.MSE, SD: s.SD, MAE: s.MAE, RMS: s.RMS,
			MaxAbs: s.MaxAbs, MaxSigned: s.MaxSigned, MaxAt: at.Molecule + " " + at.Quantity, Confidence: o.Confidence, Flagged: flagged}
		if s.HasCI {
			lo, hi := s.CILow, s.CIHigh
			row.CILow, row.CIHigh = &lo, &hi
		}
		t.Stats = append(t.Stats, row)
	}
}

// levelDiffs compares every pair of levels, kind by kind, over the
// entries both levels have, pairing the values entry by entry. The
// reference (and its uncertainty) cancels from a paired difference; what
// remains uncertain is which entries happen to be in the set, which the
// bootstrap over entries estimates.
func (t *Table) levelDiffs(o Options) {
	type key struct{ level, kind string }
	vals := map[key]map[string]float64{} // computed − reference by entry
	for _, d := range t.Deviations {
		k := key{d.Level, d.Kind}
		if vals[k] == nil {
			vals[k] = map[string]float64{}
		}
		vals[k][d.EntryID] = d.Signed
	}
	kinds := []string{KindBondLength, KindAngle, KindDipoleNorm, KindDipoleAxis, KindQuadrupole, KindEnergy, KindEnergyDelta}
	for a := 0; a < len(t.Levels); a++ {
		for b := a + 1; b < len(t.Levels); b++ {
			la, lb := t.Levels[a].Label, t.Levels[b].Label
			for _, kind := range kinds {
				va, vb := vals[key{la, kind}], vals[key{lb, kind}]
				if len(va) == 0 || len(vb) == 0 {
					continue
				}
				var ids []string
				for id := range va {
					if _, ok := vb[id]; ok {
						ids = append(ids, id)
					}
				}
				if len(ids) == 0 {
					continue
				}
				sort.Strings(ids)
				diff := make([]float64, len(ids))
				absDiff := make([]float64, len(ids))
				for i, id := range ids {
					diff[i] = va[id] - vb[id]
					absDiff[i] = math.Abs(va[id]) - math.Abs(vb[id])
				}
				unit := NaturalUnit(kind)
				ld := LevelDiff{LevelA: la, LevelB: lb, Kind: kind, Unit: unit, N: len(ids), Confidence: o.Confidence,
					MeanDiff: stat.Mean(diff, nil), MAEDiff: stat.Mean(absDiff, nil)}
				if len(ids) < minVerdict {
					ld.Verdict = fmt.Sprintf("only %d common entr%s: too few to judge", len(ids), plural(len(ids), "y", "ies"))
					t.LevelDiffs = append(t.LevelDiffs, ld)
					continue
				}
				rng := streamFor(o.Seed, "pair", la, lb, kind)
				l1, h1 := BootstrapMeanCI(diff, o.BootstrapSamples, o.Confidence, rng)
				l2, h2 := BootstrapMeanCI(absDiff, o.BootstrapSamples, o.Confidence, rng)
				ld.CILow, ld.CIHigh, ld.MAECILow, ld.MAECIHigh = &l1, &h1, &l2, &h2
				excl := func(lo, hi float64) bool { return lo > 0 || hi < 0 }
				switch {
				case excl(l2, h2):
					closer, other := la, lb
					if ld.MAEDiff > 0 {
						closer, other = lb, la
					}
					ld.Significant = true
					ld.Verdict = fmt.Sprintf("%s is closer to the reference than %s beyond the uncertainty (MAE lower by %.3g %s over %d entries)", closer, other, math.Abs(ld.MAEDiff), unit, ld.N)
				case excl(l1, h1):
					ld.Significant = true
					ld.Verdict = fmt.Sprintf("the levels differ systematically (mean %s − %s = %.3g %s) but neither is closer to the reference beyond the uncertainty", la, lb, ld.MeanDiff, unit)
				default:
					ld.Verdict = "no difference beyond the uncertainty"
				}
				t.LevelDiffs = append(t.LevelDiffs, ld)
			}
		}
	}
}

// minVerdict is the number of common entries below which level pairs get no verdict.
const minVerdict = 5

func plural(n int, one, many string) string {
	if n == 1 {
		return one
	}
	return many
}

package integral

// Read-only access to the in-core integral store, for code that needs the
// integrals themselves rather than J and K (e.g. an AO→MO transformation).

// PairClass is the set of function pairs of one pair of shell groups (the
// unit in which integrals are stored). Pair function f joins functions
// Mu[f] and Nu[f]. When Self is true the class pairs a shell group with
// itself and every pair with Mu[f] ≠ Nu[f] is listed in both orders (the
// two entries hold the same integrals); otherwise each unordered function
// pair appears once, in either order.
type PairClass struct {
	Mu, Nu []int32
	Self   bool
}

// storedBlock is one stored quartet of pair classes (bra ≥ ket) with its
// packed non-zero values.
type storedBlock struct {
	bra, ket int32
	vals     []float64
	pos, cnt []uint16
}

// Stored is a read-only view of the screened integrals held in core. It
// lists blocks (bra|ket) of pair classes, bra ≥ ket, each kept block once,
// in a fixed order that depends only on the basis and the screening (not
// on the thread count). A block (P|P) holds both (ab|cd) and (cd|ab).
// Blocks dropped by the Schwarz test are absent; integrals that are
// exactly zero are stored as absent and unpack as 0. All methods are safe
// for concurrent use, also alongside J/K builds of the engine.
type Stored struct {
	classes []PairClass
	blocks  []storedBlock
	values  int64
}

// InCore reports whether the screened unique integrals are held in memory.
// They are stored by the first J/K build when they fit the memory budget;
// before that, or in direct mode, InCore is false.
func (e *ERI) InCore() bool {
	e.jkMu.Lock()
	defer e.jkMu.Unlock()
	return e.store != nil && e.store.inCore && e.store.filled
}

// Stored returns the view of the in-core integrals, or nil when they are
// not in core (see InCore). Each call builds a new index (cheap: one
// entry per stored block); the integral values are shared, not copied.
func (e *ERI) Stored() *Stored {
	e.jkMu.Lock()
	defer e.jkMu.Unlock()
	st := e.store
	if st == nil || !st.inCore || !st.filled {
		return nil
	}
	s := &Stored{classes: make([]PairClass, len(e.pairs))}
	for P := range e.pairs {
		pd := &e.pairs[P]
		s.classes[P] = PairClass{
			Mu:   append([]int32(nil), pd.mu...),
			Nu:   append([]int32(nil), pd.nu...),
			Self: pd.I == pd.J,
		}
	}
	// The same traversal as the store pass of runChunk.
	for _, c := range st.chunks {
		ov, oc := 0, 0
		for _, P32 := range c.rows {
			P := int(P32)
			A := &e.pairs[P]
			qp := e.schwarzP[P]
			for Q := 0; Q <= P; Q++ {
				if qp*e.schwarzP[Q] < e.thr {
					continue
				}
				cnt := c.cnt[oc : oc+A.ntot : oc+A.ntot]
				k := 0
				for _, m := range cnt {
					k += int(m)
				}
				s.blocks = append(s.blocks, storedBlock{
					bra: int32(P), ket: int32(Q),
					vals: c.vals[ov : ov+k : ov+k],
					pos:  c.pos[ov : ov+k : ov+k],
					cnt:  cnt,
				})
				s.values += int64(k)
				ov += k
				oc += A.ntot
			}
		}
	}
	return s
}

// NumClasses is the number of pair classes.
func (s *Stored) NumClasses() int { return len(s.classes) }

// Class returns pair class P. Its slices must not be modified.
func (s *Stored) Class(P int) PairClass { return s.classes[P] }

// NumBlocks is the number of stored blocks.
func (s *Stored) NumBlocks() int { return len(s.blocks) }

// NumValues is the number of stored (non-zero) integrals.
func (s *Stored) NumValues() int64 { return s.values }

// Block returns the bra and ket pair classes of block k (bra ≥ ket).
func (s *Stored) Block(k int) (bra, ket int) {
	b := &s.blocks[k]
	return int(b.bra), int(b.ket)
}

// Unpack writes block k as a dense row-major matrix
// out[f·nk+g] = (Mu[f] Nu[f] | Mu'[g] Nu'[g]), f over the bra class, g
// over the ket class (nk functions pairs), chemists' notation; absent
// (exactly zero) integrals are written as 0. out must hold at least
// nb·nk values.
func (s *Stored) Unpack(k int, out []float64) {
	b := &s.blocks[k]
	nb, nk := len(s.classes[b.bra].Mu), len(s.classes[b.ket].Mu)
	out = out[:nb*nk]
	for i := range out {
		out[i] = 0
	}
	o := 0
	for f, m := range b.cnt {
		row := out[f*nk : (f+1)*nk]
		for t, v := range b.vals[o : o+int(m)] {
			row[b.pos[o+t]] = v
		}
		o += int(m)
	}
}

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

// storedBlock is one stored quartet of pair classes (bra ≥ ket): its
// chunk and the offsets of its packed values and row counts there.
type storedBlock struct {
	bra, ket int32
	chunk    int32
	c0, v0   int64
}

// Stored is a read-only view of the screened integrals held in core. It
// lists blocks (bra|ket) of pair classes, bra ≥ ket, each kept block once,
// in a fixed order that depends only on the basis and the screening (not
// on the thread count). A block (P|P) holds both (ab|cd) and (cd|ab).
// Blocks dropped by the Schwarz test are absent; integrals that are
// exactly zero are stored as absent and unpack as 0. All methods are safe
// for concurrent use, also alongside J/K builds of the engine.
type Stored struct {
	classes  []PairClass
	blocks   []storedBlock
	vals     [][]float64 // per chunk
	pos, cnt [][]uint16
	values   int64
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
	s.blocks = make([]storedBlock, 0, st.unique)
	for ci, c := range st.chunks {
		s.vals = append(s.vals, c.vals)
		s.pos = append(s.pos, c.pos)
		s.cnt = append(s.cnt, c.cnt)
		var ov, oc int64
		for _, P32 := range c.rows {
			P := int(P32)
			A := &e.pairs[P]
			qp := e.schwarzP[P]
			for Q := 0; Q <= P; Q++ {
				if qp*e.schwarzP[Q] < e.thr {
					continue
				}
				s.blocks = append(s.blocks, storedBlock{bra: int32(P), ket: int32(Q), chunk: int32(ci), c0: oc, v0: ov})
				for _, m := range c.cnt[oc : oc+int64(A.ntot)] {
					ov += int64(m)
				}
				oc += int64(A.ntot)
			}
		}
		s.values += ov
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
	cnt := s.cnt[b.chunk][b.c0 : b.c0+int64(nb)]
	vals, pos := s.vals[b.chunk][b.v0:], s.pos[b.chunk][b.v0:]
	o := 0
	for f, m := range cnt {
		row := out[f*nk : (f+1)*nk]
		for t, v := range vals[o : o+int(m)] {
			row[pos[o+t]] = v
		}
		o += int(m)
	}
}

package integral

// Block-wise access to the integrals, for code that needs the integrals
// themselves rather than J and K (e.g. an AO→MO transformation): read
// from the in-core store, or computed block by block.

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

// storedBlock locates one stored block: its chunk (−1 when the block is
// dropped by the Schwarz test) and the offsets of its row counts, packed
// values and positions there.
type storedBlock struct {
	chunk      int32
	c0, v0, p0 int64
}

// Blocks gives the integrals by blocks (P|Q) of pair classes:
// Fill(P, Q) writes (ab|cd) for every pair function ab of P and cd of Q
// (a block (P|P) thus holds both (ab|cd) and (cd|ab)). Kept says which
// blocks survive the Schwarz test; the others are zero to the threshold.
// The values are read from the in-core store (StoredBlocks; the exact
// zeros it leaves out fill as 0) or computed on each Fill
// (ComputedBlocks), with the same bits either way. All methods are safe
// for concurrent use, also alongside J/K builds of the engine.
type Blocks struct {
	e        *ERI
	stored   bool
	classes  []PairClass
	at       []storedBlock // stored: per block, index pairIndex(P, Q)
	vals     [][]float64   // stored: per chunk
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

// StoredBlocks returns the blocks of the in-core integrals, or nil when
// they are not in core (see InCore). Each call builds a new index (one
// entry per block); the integral values are shared, not copied.
func (e *ERI) StoredBlocks() *Blocks {
	e.jkMu.Lock()
	defer e.jkMu.Unlock()
	st := e.store
	if st == nil || !st.inCore || !st.filled {
		return nil
	}
	s := e.newBlocks()
	s.stored = true
	s.at = make([]storedBlock, len(e.pairs)*(len(e.pairs)+1)/2)
	for k := range s.at {
		s.at[k].chunk = -1
	}
	// The same traversal as the store pass of runChunk.
	for ci, c := range st.chunks {
		s.vals = append(s.vals, c.vals)
		s.pos = append(s.pos, c.pos)
		s.cnt = append(s.cnt, c.cnt)
		var ov, op, oc int64
		for _, P32 := range c.rows {
			P := int(P32)
			A := &e.pairs[P]
			qp := e.schwarzP[P]
			for Q := 0; Q <= P; Q++ {
				if qp*e.schwarzP[Q] < e.thr {
					continue
				}
				s.at[pairIndex(P, Q)] = storedBlock{chunk: int32(ci), c0: oc, v0: ov, p0: op}
				nv, np := rowSizes(c.cnt[oc:oc+int64(A.ntot)], e.pairs[Q].ntot)
				ov += int64(nv)
				op += int64(np)
				oc += int64(A.ntot)
			}
		}
		s.values += ov
	}
	return s
}

// ComputedBlocks returns the blocks with values computed by Fill (each
// call evaluates the block again), whatever the in-core state.
func (e *ERI) ComputedBlocks() *Blocks { return e.newBlocks() }

func (e *ERI) newBlocks() *Blocks {
	s := &Blocks{e: e, classes: make([]PairClass, len(e.pairs))}
	for P := range e.pairs {
		pd := &e.pairs[P]
		s.classes[P] = PairClass{
			Mu:   append([]int32(nil), pd.mu...),
			Nu:   append([]int32(nil), pd.nu...),
			Self: pd.I == pd.J,
		}
	}
	return s
}

// NumClasses is the number of pair classes.
func (s *Blocks) NumClasses() int { return len(s.classes) }

// Class returns pair class P. Its slices must not be modified.
func (s *Blocks) Class(P int) PairClass { return s.classes[P] }

// Kept reports whether block (P|Q) (either order) survives the Schwarz
// test; blocks that do not are left out of the store and of J/K builds.
func (s *Blocks) Kept(P, Q int) bool {
	e := s.e
	return e.schwarzP[P]*e.schwarzP[Q] >= e.thr
}

// NumValues is the number of stored (non-zero) integrals; 0 for computed blocks.
func (s *Blocks) NumValues() int64 { return s.values }

// Stored reports whether the values are read from the in-core store.
func (s *Blocks) Stored() bool { return s.stored }

// Fill writes block (P|Q) (either order) as a dense row-major matrix
// out[f·nq+g] = (Mu[f] Nu[f] | Mu'[g] Nu'[g]), f over the pair functions
// of class P, g over the nq of class Q, chemists' notation (all zero for
// a block that is not kept). out must hold at least np·nq values.
func (s *Blocks) Fill(P, Q int, out []float64) {
	np, nq := len(s.classes[P].Mu), len(s.classes[Q].Mu)
	out = out[:np*nq]
	if !s.Kept(P, Q) {
		for i := range out {
			out[i] = 0
		}
		return
	}
	if !s.stored {
		e := s.e
		w := e.getWork()
		if P >= Q {
			e.quartet(&e.pairs[P], &e.pairs[Q], w, out)
		} else { // as (Q|P), so that both orders have the same bits
			blk := w.out[:nq*np]
			e.quartet(&e.pairs[Q], &e.pairs[P], w, blk)
			for g := 0; g < nq; g++ {
				for f, v := range blk[g*np : (g+1)*np] {
					out[f*nq+g] = v
				}
			}
		}
		e.workPool.Put(w)
		return
	}
	for i := range out {
		out[i] = 0
	}
	b := s.at[pairIndex(P, Q)]
	vals, pos := s.vals[b.chunk][b.v0:], s.pos[b.chunk][b.p0:]
	if P < Q { // stored as (Q|P): write its transpose
		o, op := 0, 0
		for g, m := range s.cnt[b.chunk][b.c0 : b.c0+int64(nq)] {
			row := vals[o : o+int(m)]
			o += int(m)
			if int(m) == np { // a whole row
				for f, v := range row {
					out[f*nq+g] = v
				}
				continue
			}
			for t, v := range row {
				out[int(pos[op+t])*nq+g] = v
			}
			op += int(m)
		}
		return
	}
	o, op := 0, 0
	for f, m := range s.cnt[b.chunk][b.c0 : b.c0+int64(np)] {
		row := out[f*nq : (f+1)*nq]
		src := vals[o : o+int(m)]
		o += int(m)
		if int(m) == nq {
			copy(row, src)
			continue
		}
		for t, v := range src {
			row[pos[op+t]] = v
		}
		op += int(m)
	}
}

package study

import (
	"fmt"
	"sort"
	"strconv"
	"strings"
)

// Part names one shard of a study: shard K of N (1 ≤ K ≤ N).
type Part struct {
	K int `json:"shard"`
	N int `json:"shards"`
}

func (p Part) String() string { return fmt.Sprintf("%d/%d", p.K, p.N) }

// MaxShards bounds the number of shards a study can be split into.
const MaxShards = 10000

// ParsePart reads "K/N".
func ParsePart(s string) (Part, error) {
	ks, ns, ok := strings.Cut(strings.TrimSpace(s), "/")
	k, err1 := strconv.Atoi(ks)
	n, err2 := strconv.Atoi(ns)
	if !ok || err1 != nil || err2 != nil {
		return Part{}, fmt.Errorf("shard %q is not K/N (for example 3/8)", s)
	}
	if n < 1 || n > MaxShards || k < 1 || k > n {
		return Part{}, fmt.Errorf("shard %q: K/N needs 1 ≤ K ≤ N ≤ %d", s, MaxShards)
	}
	return Part{K: k, N: n}, nil
}

// Groups returns the study's items in groups that must run in one place:
// an optimisation together with every item that starts from its geometry.
// Groups are in plan order of their first item; items keep plan order.
func (p *Plan) Groups() [][]*Item {
	root := func(it *Item) *Item {
		for it.From != nil {
			it = it.From
		}
		return it
	}
	idx := map[*Item]int{}
	var groups [][]*Item
	for _, it := range p.Items {
		r := root(it)
		g, ok := idx[r]
		if !ok {
			g = len(groups)
			idx[r] = g
			groups = append(groups, nil)
		}
		groups[g] = append(groups[g], it)
	}
	return groups
}

// Assign splits the study into n shards and returns the shard (1…n) of
// each item, by item index.
//
// The assignment depends on the study file alone, so every machine that
// reads the same file agrees on it without talking to the others. Items
// that depend on each other — an energy on the geometry another level
// optimised, and that optimisation — form one group and always land in
// the same shard, so no shard waits for another. Groups are dealt out
// largest first, each to the shard with the fewest items so far (the
// lowest-numbered one on a tie); the shards' item counts then differ by
// at most the size of the largest group. Changing the study file (adding
// a level or a molecule) can move items between shards; items already
// stored anywhere the shard looks are reused wherever they land.
func (p *Plan) Assign(n int) []int {
	if n < 1 {
		n = 1
	}
	groups := p.Groups()
	order := make([]int, len(groups))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return len(groups[order[a]]) > len(groups[order[b]]) })
	load := make([]int, n)
	out := make([]int, len(p.Items))
	// A heap would make this n·log; the linear scan keeps it obviously
	// deterministic and costs 100 × 10,000 steps at the sizes studies have.
	for _, g := range order {
		best := 0
		for s := 1; s < n; s++ {
			if load[s] < load[best] {
				best = s
			}
		}
		load[best] += len(groups[g])
		for _, it := range groups[g] {
			out[it.Index] = best + 1
		}
	}
	return out
}

// Shard returns the plan of shard part.K of part.N: the items Assign gives
// it, in plan order (each item keeps its index in the whole study).
func (p *Plan) Shard(part Part) (*Plan, error) {
	if part.N < 1 || part.K < 1 || part.K > part.N {
		return nil, fmt.Errorf("shard %d/%d does not exist", part.K, part.N)
	}
	as := p.Assign(part.N)
	sp := &Plan{Study: p.Study, Part: &part}
	for _, it := range p.Items {
		if as[it.Index] == part.K {
			sp.Items = append(sp.Items, it)
		}
	}
	return sp, nil
}

package kinetics

import (
	"math"
	"sort"
)

// smoothing is the smoothed mass and the drying rate of a run, segment by
// segment between steps, worked out for a reading when asked: stored, they
// were two columns the size of the run (16 MB at a million readings, and
// on a virtual machine the first touch of that memory cost more than the
// fits). A reading not kept has neither (NaN).
type smoothing struct {
	t    []float64
	keep []bool
	segs []segFit // in time order
	// index maps a reading to the reading of the series fitted, when the
	// fit was made on the readings in time order only (-1: left out); nil
	// when they are the same.
	index []int32
}

// segFit is the fit of the readings [lo, hi) of one segment: each kept
// reading's own (own: sm, rt in kept order, rank[i−first] the order of
// reading i), or fits at bin centres bt carried to the readings between
// them linearly (a dense log).
type segFit struct {
	lo, hi int
	fitted bool
	own    bool
	first  int
	rank   []int32
	bt     []float64
	sm, rt []float64
}

// at is the smoothed mass and the rate at reading i.
func (s *smoothing) at(i int) (float64, float64) {
	if s == nil {
		return math.NaN(), math.NaN()
	}
	if s.index != nil {
		if i = int(s.index[i]); i < 0 {
			return math.NaN(), math.NaN()
		}
	}
	if !s.keep[i] {
		return math.NaN(), math.NaN()
	}
	k := sort.Search(len(s.segs), func(k int) bool { return s.segs[k].hi > i })
	if k == len(s.segs) {
		return math.NaN(), math.NaN()
	}
	g := &s.segs[k]
	switch {
	case !g.fitted:
		return math.NaN(), math.NaN()
	case g.own:
		j := g.rank[i-g.first]
		return g.sm[j], g.rt[j]
	}
	return g.carry(s.t[i], max(0, sort.SearchFloat64s(g.bt, s.t[i])-1))
}

// carry takes the bin fits to time t from bin j (the last bin before t, or
// the first): linear between bin centres, along the slope beyond the ends.
func (g *segFit) carry(t float64, j int) (float64, float64) {
	bt, bs, br := g.bt, g.sm, g.rt
	if j+1 >= len(bt) || t <= bt[j] {
		return bs[j] - br[j]*(t-bt[j]), br[j]
	}
	f := (t - bt[j]) / (bt[j+1] - bt[j])
	return bs[j] + f*(bs[j+1]-bs[j]), br[j] + f*(br[j+1]-br[j])
}

// each calls fn for every kept reading that has a smoothed mass, in time
// order, walking the bins forward instead of searching them, until fn
// returns false.
func (s *smoothing) each(fn func(i int, smooth, rate float64) bool) {
	if s == nil || s.index != nil {
		for i := range s.lenAll() {
			if sm, rt := s.at(i); !math.IsNaN(sm) && !fn(i, sm, rt) {
				return
			}
		}
		return
	}
	for k := range s.segs {
		g := &s.segs[k]
		if !g.fitted {
			continue
		}
		j, b := int32(0), 0
		for i := g.lo; i < g.hi; i++ {
			if !s.keep[i] {
				continue
			}
			var sm, rt float64
			if g.own {
				sm, rt = g.sm[j], g.rt[j]
				j++
			} else {
				for b+1 < len(g.bt) && g.bt[b+1] < s.t[i] {
					b++
				}
				sm, rt = g.carry(s.t[i], b)
			}
			if !math.IsNaN(sm) && !fn(i, sm, rt) {
				return
			}
		}
	}
}

// lenAll is the number of readings the smoothing answers for.
func (s *smoothing) lenAll() int {
	if s == nil {
		return 0
	}
	if s.index != nil {
		return len(s.index)
	}
	return len(s.t)
}

// smooth is the smoothed mass at reading i.
func (s *smoothing) smooth(i int) float64 { v, _ := s.at(i); return v }

// rate is the drying rate at reading i.
func (s *smoothing) rate(i int) float64 { _, v := s.at(i); return v }

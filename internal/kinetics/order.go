package kinetics

import (
	"math"
	"sort"
)

// inOrder picks the readings the analysis can use as a time series: those at
// or before the cut (all of them when cut is NaN or not positive, whatever
// their order in the file), with each time used once and times increasing.
// why[i] is KeepOK for a picked reading, else the reason it was not:
// RejAfterCut, RejDuplicate (the same time as an earlier reading), RejOrder
// (out of time order) or RejNotPositive (no time). Out-of-order readings are
// the fewest that leave the rest in order: the longest increasing run of
// times is kept, so one early row or a clock set back loses the shorter side
// only, never the whole run.
func inOrder(t []float64, cut float64) (pick []int, why []uint8) {
	n := len(t)
	why = make([]uint8, n)
	cutting := !math.IsNaN(cut) && cut > 0
	sorted := true
	for i := range t {
		switch {
		case math.IsNaN(t[i]) || math.IsInf(t[i], 0):
			why[i] = RejNotPositive
		case cutting && t[i] > cut:
			why[i] = RejAfterCut
		}
		if i > 0 && !(t[i] > t[i-1]) {
			sorted = false
		}
	}
	if sorted {
		for i := range t {
			if pick == nil && why[i] == KeepOK {
				pick = make([]int, 0, n-i) // sized once
			}
			if why[i] == KeepOK {
				pick = append(pick, i)
			}
		}
		return dropJumps(t, pick, why), why
	}
	// The same time twice: the first one stands.
	seen := make(map[float64]struct{}, n)
	var cand []int
	for i := range t {
		if why[i] != KeepOK {
			continue
		}
		if _, dup := seen[t[i]]; dup {
			why[i] = RejDuplicate
			continue
		}
		seen[t[i]] = struct{}{}
		cand = append(cand, i)
	}
	// Longest strictly increasing subsequence of the candidates' times
	// (patience sorting, O(n log n)).
	tails := make([]int, 0, len(cand)) // index into cand of the last element of each length
	prev := make([]int, len(cand))
	for c, i := range cand {
		k := sort.Search(len(tails), func(j int) bool { return t[cand[tails[j]]] >= t[i] })
		if k > 0 {
			prev[c] = tails[k-1]
		} else {
			prev[c] = -1
		}
		if k == len(tails) {
			tails = append(tails, c)
		} else {
			tails[k] = c
		}
	}
	in := make([]bool, len(cand))
	if len(tails) > 0 {
		for c := tails[len(tails)-1]; c >= 0; c = prev[c] {
			in[c] = true
		}
	}
	for c, i := range cand {
		if in[c] {
			pick = append(pick, i)
		} else {
			why[i] = RejOrder
		}
	}
	return dropJumps(t, pick, why), why
}

// allInOrder reports whether inOrder would pick every reading: finite
// times that increase, none after the cut, no gap over MaxGapH.
func allInOrder(t []float64, cut float64) bool {
	cutting := !math.IsNaN(cut) && cut > 0
	for i, v := range t {
		if math.IsNaN(v) || math.IsInf(v, 0) || cutting && v > cut {
			return false
		}
		if i > 0 && !(v > t[i-1] && v-t[i-1] <= MaxGapH) {
			return false
		}
	}
	return true
}

// MaxGapH is the longest pause between readings taken as one run: a
// reading more than a day from the rest (a clock set to year 9999, an
// elapsed time typed in the wrong unit) is rejected as a time jump rather
// than stretching the run to millennia.
const MaxGapH = 24.0

// dropJumps keeps the largest stretch of picked readings with no gap over
// MaxGapH and marks the others RejTimeJump.
func dropJumps(t []float64, pick []int, why []uint8) []int {
	if len(pick) < 2 {
		return pick
	}
	bestFrom, bestLen, from := 0, 0, 0
	for j := 1; j <= len(pick); j++ {
		if j == len(pick) || t[pick[j]]-t[pick[j-1]] > MaxGapH {
			if j-from > bestLen {
				bestFrom, bestLen = from, j-from
			}
			from = j
		}
	}
	if bestLen == len(pick) {
		return pick
	}
	for j, i := range pick {
		if j < bestFrom || j >= bestFrom+bestLen {
			why[i] = RejTimeJump
		}
	}
	return pick[bestFrom : bestFrom+bestLen]
}

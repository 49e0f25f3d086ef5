// Package kinetics holds the drying computations: moisture on wet and dry
// basis, the plane-sheet diffusion series, smoothed drying rates, drying
// periods, thin-layer model fits and projections. It imports nothing of
// parch's own and no interface code; times are in hours unless a name says
// otherwise, masses in grams.
package kinetics

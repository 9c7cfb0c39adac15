package audit

import (
	"fmt"
)

// DefaultDivisions are the beat subdivisions tried by grid detection, coarsest
// first: a 1/N-beat grid has N steps per quarter note, so 4 is the sixteenth grid and
// 3 the eighth-note triplet grid.
var DefaultDivisions = []int{1, 2, 3, 4, 6, 8, 12, 16, 24, 32}

// GridConfig controls grid detection.
type GridConfig struct {
	// Divisions to try, in steps per quarter note. Detection picks the coarsest that
	// explains enough onsets, so order does not matter.
	Divisions []int `json:"divisions"`
	// Tolerance is how far an onset may sit from a grid line and still be on it, as
	// a share of that grid's step (0.1: within a tenth of a step). Relative to the
	// step so that a random onset lands on any grid with the same chance (2 × 0.1),
	// which keeps fine grids from explaining a free performance.
	Tolerance float64 `json:"tolerance"`
	// Threshold is the share of onsets a grid must explain (default 0.95).
	Threshold float64 `json:"threshold"`
	// MinOnsets below which no grid is claimed (default 8).
	MinOnsets int `json:"min_onsets"`
}

// DefaultGridConfig returns the defaults: every division of DefaultDivisions,
// tolerance 0.1 of a step, threshold 0.95, at least 8 onsets.
func DefaultGridConfig() GridConfig {
	return GridConfig{Divisions: DefaultDivisions, Tolerance: 0.1, Threshold: 0.95, MinOnsets: 8}
}

// Validate reports a config that cannot detect anything.
func (c GridConfig) Validate() error {
	if len(c.Divisions) == 0 {
		return fmt.Errorf("grid: no divisions")
	}
	for _, n := range c.Divisions {
		if n < 1 || n > 1<<16 {
			return fmt.Errorf("grid: division %d out of range 1..65536", n)
		}
	}
	if !(c.Tolerance >= 0 && c.Tolerance < 0.5) {
		return fmt.Errorf("grid: tolerance %v outside [0, 0.5)", c.Tolerance)
	}
	if !(c.Threshold > 0 && c.Threshold <= 1) {
		return fmt.Errorf("grid: threshold %v outside (0, 1]", c.Threshold)
	}
	if c.MinOnsets < 0 {
		return fmt.Errorf("grid: negative min onsets %d", c.MinOnsets)
	}
	return nil
}

// GridShare is the share of onsets one grid explains.
type GridShare struct {
	Division int     `json:"division"`
	Share    float64 `json:"share"`
	Exact    float64 `json:"exact"` // share exactly on a grid line
}

// Grid is the result of grid detection for one piece.
type Grid struct {
	// Division is the chosen grid in steps per quarter note, 0 when no grid explains
	// enough onsets (or detection does not apply).
	Division int `json:"division"`
	// Share of onsets on the chosen grid; when none was chosen, the best share of any.
	Share  float64     `json:"share"`
	Label  string      `json:"label"`
	Onsets int         `json:"onsets"`
	Shares []GridShare `json:"shares,omitempty"` // per division, in the order tried
}

// Grid labels besides "on a 1/x grid" and "triplet grid (...)".
const (
	LabelUnquantized = "unquantized performance"
	LabelFewOnsets   = "too few onsets"
	LabelNoBeat      = "no beat grid (SMPTE division)"
)

// GridLabel names the grid with n steps per quarter note in note values: 4 → "on a
// 1/16 grid", 3 → "triplet grid (1/8 triplets)", 12 → "triplet grid (1/32
// triplets)"; other divisions are named by their beat fraction.
func GridLabel(n int) string {
	switch {
	case n <= 0:
		return LabelUnquantized
	case n&(n-1) == 0:
		return fmt.Sprintf("on a 1/%d grid", 4*n)
	case n%3 == 0 && (n/3)&(n/3-1) == 0:
		return fmt.Sprintf("triplet grid (1/%d triplets)", 8*n/3) // 3 → 1/8, 6 → 1/16
	default:
		return fmt.Sprintf("on a 1/%d-beat grid", n)
	}
}

// DetectGrid finds the coarsest grid of cfg.Divisions that explains at least
// cfg.Threshold of the onsets (ticks from the piece start) of a piece with ppq ticks
// per quarter note. An onset t is on the 1/N grid when its distance to the nearest
// multiple of ppq/N ticks is at most cfg.Tolerance of that step; the test is done in
// integers (t·N mod ppq), so grids that do not divide ppq (triplets at 256 PPQ) work.
// A ppq ≤ 0 (SMPTE division) has no beat grid.
func DetectGrid(onsets []int64, ppq int, cfg GridConfig) Grid {
	g := Grid{Onsets: len(onsets)}
	if ppq <= 0 {
		g.Label = LabelNoBeat
		return g
	}
	if len(onsets) < max(cfg.MinOnsets, 1) {
		g.Label = LabelFewOnsets
		return g
	}
	p := int64(ppq)
	limit := cfg.Tolerance * float64(ppq) // distance·N/ppq ≤ tol  ⇔  d ≤ tol·ppq, with d = t·N mod ppq folded
	g.Shares = make([]GridShare, len(cfg.Divisions))
	for k, n := range cfg.Divisions {
		var hit, exact int
		nn := int64(n)
		for _, t := range onsets {
			d := (t % p) * nn % p
			if d < 0 {
				d += p
			}
			d = min(d, p-d)
			if float64(d) <= limit {
				hit++
				if d == 0 {
					exact++
				}
			}
		}
		g.Shares[k] = GridShare{Division: n, Share: float64(hit) / float64(len(onsets)), Exact: float64(exact) / float64(len(onsets))}
	}
	best := -1
	for k, s := range g.Shares {
		if s.Share >= cfg.Threshold && (best < 0 || s.Division < g.Shares[best].Division) {
			best = k
		}
	}
	if best < 0 {
		for _, s := range g.Shares {
			g.Share = max(g.Share, s.Share)
		}
		g.Label = LabelUnquantized
		return g
	}
	g.Division = g.Shares[best].Division
	g.Share = g.Shares[best].Share
	g.Label = GridLabel(g.Division)
	return g
}

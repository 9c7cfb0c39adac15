package relpos

import (
	"fmt"
	"sort"
)

// LogSetting is one log-bucket setting of a sweep.
type LogSetting struct {
	Buckets int `yaml:"buckets" json:"buckets"`
	Max     int `yaml:"max" json:"max"`
}

// KindGrid is the grid of one offset kind: every width × clip as a linear scheme, and
// every log setting.
type KindGrid struct {
	Widths []int        `yaml:"widths" json:"widths"`
	Clips  []int        `yaml:"clips" json:"clips"`
	Log    []LogSetting `yaml:"log" json:"log"`
}

// Grid is the set of settings a sweep evaluates, per offset kind.
type Grid struct {
	Distance KindGrid `yaml:"distance" json:"distance"`
	Time     KindGrid `yaml:"time" json:"time"`
	Pitch    KindGrid `yaml:"pitch" json:"pitch"`
}

func (g *Grid) of(k Kind) *KindGrid {
	switch k {
	case Distance:
		return &g.Distance
	case Time:
		return &g.Time
	}
	return &g.Pitch
}

// DefaultGrid returns a grid around common settings: token distance widths 1-16 with
// clips 8-512 and log buckets up to 128 (Raffel et al. 2020 use 32 up to 128); time
// widths 1-200 units with clips 8-256 and log buckets up to 16000 units; pitch widths
// 1-12 semitones with clips 3-48.
func DefaultGrid() Grid {
	return Grid{
		Distance: KindGrid{Widths: []int{1, 2, 4, 8, 16}, Clips: []int{8, 16, 32, 64, 128, 256, 512},
			Log: []LogSetting{{16, 64}, {32, 128}, {32, 512}, {64, 512}, {64, 2048}, {128, 2048}}},
		Time: KindGrid{Widths: []int{1, 5, 10, 20, 50, 100, 200}, Clips: []int{8, 16, 32, 64, 128, 256},
			Log: []LogSetting{{32, 1000}, {32, 4000}, {64, 4000}, {64, 16000}, {128, 16000}}},
		Pitch: KindGrid{Widths: []int{1, 2, 3, 4, 6, 12}, Clips: []int{3, 6, 12, 24, 36, 48},
			Log: []LogSetting{{16, 48}, {32, 96}}},
	}
}

// maxGridSchemes bounds the settings of one kind.
const maxGridSchemes = 4096

// Specs returns the scheme specs of the grid for kind k: widths × clips, then the log
// settings.
func (g Grid) Specs(k Kind) ([]SchemeSpec, error) {
	kg := g.of(k)
	if n := len(kg.Widths)*len(kg.Clips) + len(kg.Log); n > maxGridSchemes {
		return nil, fmt.Errorf("sweep grid: %s has %d settings, at most %d", k, n, maxGridSchemes)
	}
	var out []SchemeSpec
	for _, w := range kg.Widths {
		for _, clip := range kg.Clips {
			out = append(out, SchemeSpec{Scheme: TypeLinear, Width: w, Clip: clipPtr(clip)})
		}
	}
	for _, l := range kg.Log {
		out = append(out, SchemeSpec{Scheme: TypeLog, Buckets: l.Buckets, Max: l.Max})
	}
	return out, nil
}

// SweepConfig returns base with its schemes replaced by the grid's, the instrument
// breakdown and joint table off: counting it once evaluates every setting in one pass.
func SweepConfig(base Config, g Grid) (Config, error) {
	cfg := base
	off := false
	cfg.Instruments, cfg.Joint = &off, false
	for _, k := range Kinds {
		specs, err := g.Specs(k)
		if err != nil {
			return Config{}, err
		}
		if len(specs) == 0 {
			return Config{}, fmt.Errorf("sweep grid: no settings for %s", k)
		}
		switch k {
		case Distance:
			cfg.Distance = specs
		case Time:
			cfg.Time = specs
		default:
			cfg.Pitch = specs
		}
	}
	if err := cfg.Validate(); err != nil {
		return Config{}, fmt.Errorf("sweep grid: %w", err)
	}
	return cfg, nil
}

// SweepRow is the coverage of one setting.
type SweepRow struct {
	Kind      string    `json:"kind"`
	Scheme    string    `json:"scheme"`
	Buckets   int       `json:"buckets"` // bucket ids of the scheme
	Rows      int       `json:"rows"`    // bucket ids the pairs can reach
	Pairs     int64     `json:"pairs"`
	Inside    float64   `json:"inside_share"`
	SatLow    float64   `json:"sat_low_share"`
	SatHigh   float64   `json:"sat_high_share"`
	Unused    int       `json:"unused"`
	Effective float64   `json:"effective_buckets"`
	InsideCI  *Interval `json:"inside_ci,omitempty"`
}

// SweepRows returns one row per setting of the report of a sweep config, per kind in
// order of rows then scheme. With budget > 0 only settings of at most budget rows are
// kept.
func (c *Counter) SweepRows(r *Report, budget int) []SweepRow {
	var out []SweepRow
	for _, k := range Kinds {
		var rows []SweepRow
		for i, s := range r.Kind(k).Schemes {
			sch := c.schemes[k][i]
			row := SweepRow{Kind: k.String(), Scheme: s.Name, Buckets: len(s.Buckets), Rows: c.reachable(sch, k),
				Pairs: s.Pairs, Inside: s.InsideShare, SatLow: s.SatLowShare, SatHigh: s.SatHighShare,
				Unused: len(s.Unused), Effective: s.Effective, InsideCI: s.InsideCI}
			if budget > 0 && row.Rows > budget {
				continue
			}
			rows = append(rows, row)
		}
		sort.SliceStable(rows, func(i, j int) bool { return rows[i].Rows < rows[j].Rows })
		out = append(out, rows...)
	}
	return out
}

// reachable is the number of bucket ids that offsets of kind k can reach under the
// pairs mode: for causal distance and time only the buckets of offsets ≤ 0.
func (c *Counter) reachable(s *Scheme, k Kind) int {
	if !c.oneSided(k) {
		return s.Buckets()
	}
	seen := make([]bool, s.Buckets())
	n := 0
	for _, g := range s.segs {
		if g.Lo <= 0 && !seen[g.Bucket] {
			seen[g.Bucket] = true
			n++
		}
	}
	return n
}

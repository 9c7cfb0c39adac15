package export

import (
	"encoding/json"
	"fmt"
	"sync"

	"github.com/relshard/relshard/relpos"
	"github.com/relshard/relshard/tokenize"
)

// coverage counts the relative-position offsets of the exported windows exactly
// (integer sums, so the result does not depend on which worker counted what).
type coverage struct {
	cfg     relpos.Config
	counter *relpos.Counter
	mu      sync.Mutex
	total   *relpos.Tally
}

func newCoverage(cfg Config) (*coverage, error) {
	c, err := relpos.NewCounter(cfg.Buckets)
	if err != nil {
		return nil, err
	}
	return &coverage{cfg: cfg.Buckets, counter: c, total: c.NewTally()}, nil
}

// coverageWorker counts on one goroutine (a relpos.Counter keeps scratch buffers).
type coverageWorker struct {
	counter *relpos.Counter
	tally   *relpos.Tally
	toks    []tokenize.Token
}

func (c *coverage) worker() (*coverageWorker, error) {
	counter, err := relpos.NewCounter(c.cfg)
	if err != nil {
		return nil, err
	}
	return &coverageWorker{counter: counter, tally: counter.NewTally()}, nil
}

// done adds a worker's counts to the total.
func (c *coverage) done(w *coverageWorker) {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.total.Add(w.tally)
}

// addRows counts the windows of rows. It rebuilds tokens from the columns, so a
// count from shards read back (Merge) equals the count made while exporting.
func (w *coverageWorker) addRows(rows []Row) error {
	for i := range rows {
		r := &rows[i]
		w.toks = w.toks[:0]
		for j := range r.Tokens {
			w.toks = append(w.toks, tokenize.Token{ID: r.Tokens[j], Time: r.Time[j], Pitch: r.Pitch[j], Inst: r.Inst[j]})
		}
		if err := w.counter.Count(w.tally, w.toks); err != nil {
			return fmt.Errorf("count coverage of %s window %d: %w", r.Piece, r.Window, err)
		}
	}
	return nil
}

// tables returns the bucket tables as JSON.
func (c *coverage) tables() (json.RawMessage, error) {
	t, err := c.cfg.Tables()
	if err != nil {
		return nil, err
	}
	return json.Marshal(t)
}

// CoverageSummary is the coverage section of the manifest: how the bucket schemes
// cover the offsets of every (query, key) pair of the exported windows.
type CoverageSummary struct {
	Windows int64            `json:"windows"`
	Tokens  int64            `json:"tokens"`
	NoPitch int64            `json:"no_pitch_pairs"` // pairs with a token without pitch
	Schemes []SchemeCoverage `json:"schemes"`
}

// SchemeCoverage is one scheme's share of pairs inside its range.
type SchemeCoverage struct {
	Kind    string  `json:"kind"`
	Name    string  `json:"name"`
	Buckets int     `json:"buckets"`
	Pairs   int64   `json:"pairs"`
	Inside  int64   `json:"inside"`
	SatLow  int64   `json:"sat_low"`
	SatHigh int64   `json:"sat_high"`
	Covered float64 `json:"covered"` // inside / pairs, 1 with no pairs
}

// summary returns the coverage summary of everything counted, as JSON.
func (c *coverage) summary() (json.RawMessage, error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	counts := c.counter.Counts(c.total)
	s := CoverageSummary{Windows: c.total.Windows, Tokens: c.total.Tokens, NoPitch: counts.NoPitch, Schemes: []SchemeCoverage{}}
	for _, k := range relpos.Kinds {
		schemes := c.counter.Schemes(k)
		kc := counts.Kinds[k]
		for i, sch := range schemes {
			if i >= len(kc.Schemes) {
				break
			}
			sc := kc.Schemes[i]
			cov := 1.0
			if sc.Pairs > 0 {
				cov = float64(sc.Inside) / float64(sc.Pairs)
			}
			s.Schemes = append(s.Schemes, SchemeCoverage{Kind: k.String(), Name: sch.Name, Buckets: sch.Buckets(),
				Pairs: sc.Pairs, Inside: sc.Inside, SatLow: sc.SatLow, SatHigh: sc.SatHigh, Covered: cov})
		}
	}
	return json.Marshal(s)
}

package relpos

import "math"

// Table is the JSON form of a scheme: every offset range and its bucket id, so that
// training code applies exactly the mapping that coverage measured. Offsets are key
// position minus query position (Offset says so in the file).
type Table struct {
	Kind      string       `json:"kind,omitempty"` // offset kind: distance, time or pitch
	Unit      string       `json:"unit,omitempty"` // unit of the offsets, e.g. tokens, ms, grid steps, semitones
	Name      string       `json:"name"`
	Scheme    string       `json:"scheme"` // linear, log or edges
	Offset    string       `json:"offset"` // "key - query"
	Buckets   int          `json:"buckets"`
	Width     int          `json:"width,omitempty"`
	Clip      *int         `json:"clip,omitempty"`
	Max       int          `json:"max,omitempty"`
	Exact     int          `json:"exact,omitempty"`
	Direction Mode         `json:"direction,omitempty"`
	Edges     []int64      `json:"edges,omitempty"`
	Ranges    []TableRange `json:"ranges"`
}

// TableRange is one run of offsets [From, To] (inclusive) with its bucket id. A nil
// From or To is an open end. Saturated is "low" or "high" for offsets beyond the
// scheme's range.
type TableRange struct {
	From      *int64 `json:"from"`
	To        *int64 `json:"to"`
	Bucket    int    `json:"bucket"`
	Saturated string `json:"saturated,omitempty"`
}

// Table returns the scheme's table.
func (s *Scheme) Table() Table {
	t := Table{Name: s.Name, Scheme: s.Type, Offset: "key - query", Buckets: s.n}
	switch s.Type {
	case TypeLinear:
		clip := s.Clip
		t.Width, t.Clip = s.Width, &clip
	case TypeLog:
		t.Max, t.Exact, t.Direction = s.MaxOffset, s.Exact, s.Direction
	case TypeEdges:
		t.Edges = append([]int64(nil), s.Edges...)
	}
	for _, g := range s.segs {
		r := TableRange{Bucket: g.Bucket}
		if g.Lo != math.MinInt64 {
			lo := g.Lo
			r.From = &lo
		}
		if g.Hi != math.MaxInt64 {
			hi := g.Hi
			r.To = &hi
		}
		switch g.Sat {
		case SatLow:
			r.Saturated = "low"
		case SatHigh:
			r.Saturated = "high"
		}
		t.Ranges = append(t.Ranges, r)
	}
	return t
}

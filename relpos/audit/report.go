package audit

import (
	"math"
)

// Report is the outcome of an audit: per-dataset distributions, per-file facts,
// comparisons between datasets and outliers.
type Report struct {
	// TimeUnit is the unit of pairwise Δt: "ms" for the performance encoding, "grid
	// steps" for the beat-grid encoding. Other times are always in ms.
	TimeUnit    string       `json:"time_unit"`
	Settings    Settings     `json:"settings"`
	Datasets    []*Dataset   `json:"datasets"`
	Comparisons []Comparison `json:"comparisons"`
	Outliers    []Outlier    `json:"outliers"`
	Coverage    []Coverage   `json:"coverage"`
	Files       []File       `json:"files"`
	// Skipped lists the input files ingest skipped, in scan order, with the reason.
	Skipped []Skipped `json:"skipped"`
	// Schemes are the bucket schemes drawn on the charts, with their edges in the unit
	// of their offset kind.
	Schemes []Scheme `json:"schemes"`
}

// Skipped is an input file that was not audited.
type Skipped struct {
	Dataset string `json:"dataset"`
	Path    string `json:"path"`
	Reason  string `json:"reason"`
}

// Settings records the parameters a report was made with.
type Settings struct {
	Encoding string        `json:"encoding"`
	Pairs    string        `json:"pairs"` // causal or bidirectional, as relpos counts them
	MaxLen   int           `json:"max_len"`
	Grid     GridConfig    `json:"grid"`
	Tempo    TempoRange    `json:"tempo"`
	Outlier  OutlierConfig `json:"outlier"`
}

// Dataset holds the distributions and counts of one dataset.
type Dataset struct {
	Name       string  `json:"name"`
	Files      int     `json:"files"`      // input files of the dataset, every status
	Read       int     `json:"read"`       // files audited
	Skipped    int     `json:"skipped"`    // files skipped by ingest
	Duplicates int     `json:"duplicates"` // files skipped as duplicates
	Pieces     int     `json:"pieces"`
	Notes      int64   `json:"notes"`
	Hours      float64 `json:"hours"`
	Windows    int64   `json:"windows"`
	DrumShare  float64 `json:"drum_share"` // of all notes

	IOI       *Dist `json:"ioi"`       // ms between successive distinct onsets
	PairDT    *Dist `json:"pair_dt"`   // |Δt| of token pairs inside windows, in TimeUnit
	PairDP    *Dist `json:"pair_dp"`   // Δp of pitched token pairs inside windows, semitones
	Duration  *Dist `json:"duration"`  // ms
	Velocity  *Dist `json:"velocity"`  // 1-127
	Polyphony *Dist `json:"polyphony"` // pitched notes sounding at each onset
	Tempo     *Dist `json:"tempo"`     // BPM at each onset

	Grids        []Count `json:"grids"`         // pieces per grid label, most first
	PPQs         []Count `json:"ppqs"`          // pieces per PPQ ("SMPTE" for SMPTE division)
	TempoFlagged int     `json:"tempo_flagged"` // pieces with a tempo outside the plausible range
	MissingMeter int     `json:"missing_meter"` // pieces without a time signature
	NotEncoded   int     `json:"not_encoded"`   // pieces the encoder refused (see File.Error)

	acc *dsAcc
}

// Count is a labelled count.
type Count struct {
	Label string `json:"label"`
	N     int    `json:"n"`
}

// Dist summarizes one distribution; Bins are its coarse bins (the ones datasets
// and files are compared on).
type Dist struct {
	Unit  string  `json:"unit"`
	N     int64   `json:"n"`
	Min   int64   `json:"min"`
	Max   int64   `json:"max"`
	Mean  float64 `json:"mean"`
	P50   int64   `json:"p50"`
	P90   int64   `json:"p90"`
	P99   int64   `json:"p99"`
	Edges []int64 `json:"edges,omitempty"` // lower edge of each coarse bin
	Bins  []int64 `json:"bins,omitempty"`

	h *Hist
}

// Hist returns the exact histogram behind the summary.
func (d *Dist) Hist() *Hist { return d.h }

func newDist(h *Hist, unit string, b *Bins) *Dist {
	d := &Dist{Unit: unit, N: h.N, h: h}
	if h.N == 0 {
		return d
	}
	d.Min, d.Max = h.Min, h.Max
	d.Mean = h.Mean()
	d.P50, _ = h.Quantile(0.5)
	d.P90, _ = h.Quantile(0.9)
	d.P99, _ = h.Quantile(0.99)
	if b != nil {
		d.Edges = b.Edges
		if b == &pitchBins {
			d.Edges = append([]int64{-maxPairDP}, b.Edges[1:]...)
		}
		d.Bins = b.Count(h)
	}
	return d
}

// Comparison holds the distances between two datasets' distributions of one
// offset kind.
type Comparison struct {
	Kind string `json:"kind"` // "dt" or "dp"
	A    string `json:"a"`
	B    string `json:"b"`
	// JSD is the Jensen–Shannon divergence in nats (0 to ln 2) over the coarse bins.
	JSD JSONFloat `json:"jsd"`
	// Wasserstein is the 1-D earth mover's distance in the unit of the kind, over the
	// exact histograms (counters merged to Resolution units when they had too many
	// distinct values).
	Wasserstein JSONFloat `json:"wasserstein"`
	Resolution  int64     `json:"resolution"`
}

// Outlier is a file whose distributions are far from its dataset's.
type Outlier struct {
	Dataset string   `json:"dataset"`
	Path    string   `json:"path"`
	Piece   int      `json:"piece"`
	Score   float64  `json:"score"` // the largest divergence behind the reasons, in nats
	Reasons []string `json:"reasons"`
}

// Coverage is the share of token pairs each bucket scheme covers in one dataset.
type Coverage struct {
	Dataset   string  `json:"dataset"`
	Kind      string  `json:"kind"`   // "distance", "time" or "pitch"
	Scheme    string  `json:"scheme"` // the scheme's name
	Pairs     int64   `json:"pairs"`
	Inside    int64   `json:"inside"` // pairs inside the clip range, not saturated
	Share     float64 `json:"share"`  // Inside / Pairs
	Buckets   int     `json:"buckets"`
	Unused    int     `json:"unused"`    // buckets never hit
	Saturated float64 `json:"saturated"` // share of pairs in the edge buckets
}

// Scheme is one bucket scheme drawn on the charts: the edges between its buckets
// and the clip beyond which offsets saturate, as offset magnitudes for time and
// signed values for pitch.
type Scheme struct {
	Name  string    `json:"name"`
	Kind  string    `json:"kind"` // "time" or "pitch"
	Edges []float64 `json:"edges"`
	Clip  []float64 `json:"clip"` // where saturation starts: one value (time) or two (pitch, low and high)
}

// File holds the facts of one piece of one input file (format-2 files have a piece
// per track).
type File struct {
	Dataset      string     `json:"dataset"`
	Path         string     `json:"path"`
	Piece        int        `json:"piece"`
	PPQ          int        `json:"ppq"` // 0 for SMPTE division
	SMPTE        bool       `json:"smpte,omitempty"`
	Notes        int        `json:"notes"`
	Seconds      float64    `json:"seconds"`
	DrumShare    float64    `json:"drum_share"`
	Grid         Grid       `json:"grid"`
	Tempo        TempoCheck `json:"tempo"`
	MissingMeter bool       `json:"missing_meter"`
	Error        string     `json:"error,omitempty"` // why the piece has no windows
	Windows      int        `json:"windows"`
	Pairs        int64      `json:"pairs"`
	// DTDivergence and DPDivergence are the Jensen–Shannon divergences (nats) of the
	// file's Δt and Δp distributions from the rest of its dataset; NaN (null in JSON)
	// when the file has too few pairs or is alone.
	DTDivergence JSONFloat `json:"dt_divergence"`
	DPDivergence JSONFloat `json:"dp_divergence"`

	seq    int64
	drums  int
	dtBins []int64
	dpBins []int64
	ioi    []int64
	p50DT  int64
	p50DP  int64
}

// JSONFloat is a float64 that encodes NaN and infinities as JSON null.
type JSONFloat float64

// MarshalJSON encodes NaN and infinities as null.
func (f JSONFloat) MarshalJSON() ([]byte, error) {
	v := float64(f)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return []byte("null"), nil
	}
	return []byte(formatFloat(v)), nil
}

// UnmarshalJSON decodes null as NaN.
func (f *JSONFloat) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*f = JSONFloat(math.NaN())
		return nil
	}
	v, err := parseFloat(string(b))
	if err != nil {
		return err
	}
	*f = JSONFloat(v)
	return nil
}

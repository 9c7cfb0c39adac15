package audit

import (
	"cmp"
	"errors"
	"fmt"
	"slices"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/relpos"
	"github.com/relshard/relshard/tokenize"
)

// Config controls an audit.
type Config struct {
	// Tokenize is the encoding whose windows the pairwise Δt and Δp are counted in.
	// Only the identity variant is audited: augmentation is left out.
	Tokenize tokenize.Config
	// Relpos gives the bucket schemes: its time and pitch schemes are drawn on the Δt
	// and Δp charts, and their coverage is reported per dataset.
	Relpos  relpos.Config
	Grid    GridConfig
	Tempo   TempoRange
	Outlier OutlierConfig
	// Scan is handed to ingest.Scan by Run.
	Scan ingest.Options
	// ByFolder makes each top-level folder of a single unnamed source its own dataset
	// (files directly in the source keep the source's name).
	ByFolder bool
	// Workers audit pieces in parallel in Run; 0 means one per core.
	Workers int
	// Progress, when set, is called by Run after each input file is read, with the
	// number of files so far, from one goroutine.
	Progress func(files int64) `json:"-"`
}

// OutlierConfig decides which files are listed as outliers.
type OutlierConfig struct {
	// MinPairs is the number of token pairs a file needs before its distributions are
	// compared with its dataset's (default 500).
	MinPairs int64 `json:"min_pairs"`
	// MinJSD is the divergence (nats) below which a file is never an outlier
	// (default 0.15, about a fifth of the maximum ln 2).
	MinJSD float64 `json:"min_jsd"`
	// MADs is how many scaled median absolute deviations above the dataset's median
	// divergence a file must lie (default 4).
	MADs float64 `json:"mads"`
	// GridMajority is the share of a dataset's pieces that must agree (all on some
	// grid, or all unquantized) before a piece that disagrees is listed (default 0.8).
	GridMajority float64 `json:"grid_majority"`
}

// DefaultConfig returns the defaults: the tokenize, relpos and ingest defaults, grid
// detection with DefaultGridConfig, tempos outside 20–400 BPM flagged, the default
// outlier rules, one dataset per top-level folder of a single source.
func DefaultConfig() Config {
	return Config{
		Tokenize: tokenize.DefaultConfig(),
		Relpos:   relpos.DefaultConfig(),
		Grid:     DefaultGridConfig(),
		Tempo:    TempoRange{MinBPM: 20, MaxBPM: 400},
		Outlier:  OutlierConfig{MinPairs: 500, MinJSD: 0.15, MADs: 4, GridMajority: 0.8},
		Scan:     ingest.DefaultOptions(),
		ByFolder: true,
	}
}

// Validate reports every invalid setting.
func (c Config) Validate() error {
	var errs []error
	if err := c.Tokenize.Validate(); err != nil {
		errs = append(errs, err)
	}
	if err := c.Grid.Validate(); err != nil {
		errs = append(errs, err)
	}
	if !(c.Tempo.MinBPM > 0 && c.Tempo.MaxBPM > c.Tempo.MinBPM) {
		errs = append(errs, fmt.Errorf("tempo range %v–%v BPM: want 0 < min < max", c.Tempo.MinBPM, c.Tempo.MaxBPM))
	}
	o := c.Outlier
	if o.MinPairs < 1 || !(o.MinJSD >= 0) || !(o.MADs >= 0) || !(o.GridMajority > 0.5 && o.GridMajority <= 1) {
		errs = append(errs, fmt.Errorf("outlier settings %+v: want min_pairs ≥ 1, min_jsd ≥ 0, mads ≥ 0, 0.5 < grid_majority ≤ 1", o))
	}
	if c.Workers < 0 {
		errs = append(errs, fmt.Errorf("workers %d: want 0 (all cores) or more", c.Workers))
	}
	if err := c.Relpos.Validate(); err != nil {
		errs = append(errs, err)
	}
	if len(errs) > 0 {
		return fmt.Errorf("audit config: %w", errors.Join(errs...))
	}
	return nil
}

// dsAcc accumulates one dataset. Every field is an integer count, so accumulators of
// different workers merge to the same totals in any order.
type dsAcc struct {
	notes        *noteStats
	dt, dp       *Hist
	files        int
	read         int
	skipped      int
	dups         int
	pieces       int
	noteN        int64
	drums        int64
	ms           int64
	windows      int64
	notEncoded   int
	grids        map[string]int
	ppqs         map[string]int
	tempoFlagged int
	missingMeter int
	tally        *relpos.Tally // coverage of every relpos scheme
}

func newDSAcc(tally *relpos.Tally) *dsAcc {
	return &dsAcc{
		notes: newNoteStats(),
		dt:    newDTHist(),
		dp:    newHist(-maxPairDP, maxPairDP),
		grids: map[string]int{},
		ppqs:  map[string]int{},
		tally: tally,
	}
}

func (a *dsAcc) merge(o *dsAcc) {
	a.notes.merge(o.notes)
	a.dt.Merge(o.dt)
	a.dp.Merge(o.dp)
	a.files += o.files
	a.read += o.read
	a.skipped += o.skipped
	a.dups += o.dups
	a.pieces += o.pieces
	a.noteN += o.noteN
	a.drums += o.drums
	a.ms += o.ms
	a.windows += o.windows
	a.notEncoded += o.notEncoded
	for k, v := range o.grids {
		a.grids[k] += v
	}
	for k, v := range o.ppqs {
		a.ppqs[k] += v
	}
	a.tempoFlagged += o.tempoFlagged
	a.missingMeter += o.missingMeter
	a.tally.Add(o.tally)
}

// Auditor accumulates pieces into per-dataset distributions. It is not safe for
// concurrent use; Run gives each worker its own and merges them.
type Auditor struct {
	cfg      Config
	enc      *tokenize.Encoder
	counter  *relpos.Counter
	datasets map[string]*dsAcc
	files    []File
	skipped  []Skipped
	seq      int64

	sc     pieceScratch
	pc     pairCounter
	stream []tokenize.Token
	fdt    *Hist
	fdp    *Hist
}

// New returns an Auditor for cfg.
func New(cfg Config) (*Auditor, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	tc := cfg.Tokenize
	tc.Transpose, tc.Stretch = []int{0}, []float64{1}
	enc, err := tokenize.NewEncoder(tc)
	if err != nil {
		return nil, fmt.Errorf("audit: %w", err)
	}
	// Coverage is counted exactly, without the joint table or the instrument
	// breakdown, which the audit does not show.
	rc := cfg.Relpos
	rc.Sample, rc.Joint = 0, false
	off := false
	rc.Instruments = &off
	counter, err := relpos.NewCounter(rc)
	if err != nil {
		return nil, fmt.Errorf("audit: %w", err)
	}
	return &Auditor{
		cfg:      cfg,
		enc:      enc,
		counter:  counter,
		datasets: map[string]*dsAcc{},
		fdt:      newDTHist(),
		fdp:      newHist(-maxPairDP, maxPairDP),
	}, nil
}

func (a *Auditor) dataset(name string) *dsAcc {
	d := a.datasets[name]
	if d == nil {
		d = newDSAcc(a.counter.NewTally())
		a.datasets[name] = d
	}
	return d
}

// AddRecord counts one input file of a dataset by its ingest record; call it once
// per file, before or after its pieces. Skipped files are listed with their reason.
func (a *Auditor) AddRecord(dataset string, rec *ingest.FileRecord) {
	d := a.dataset(dataset)
	d.files++
	switch rec.Status {
	case ingest.StatusOK:
		d.read++
	case ingest.StatusDuplicate:
		d.dups++
	default:
		d.skipped++
		a.skipped = append(a.skipped, Skipped{Dataset: dataset, Path: rec.Path, Reason: rec.Reason})
	}
}

// AddPiece audits one piece of the file at path in dataset: its notes, its grid, its
// tempo map, and the token pairs of every window of its identity variant.
func (a *Auditor) AddPiece(dataset, path string, p *ingest.Piece) error {
	a.seq++
	return a.addPiece(a.seq, dataset, path, p)
}

func (a *Auditor) addPiece(seq int64, dataset, path string, p *ingest.Piece) error {
	if p == nil {
		return fmt.Errorf("audit %s: nil piece", path)
	}
	d := a.dataset(dataset)
	f := File{Dataset: dataset, Path: path, Piece: p.Index, seq: seq}
	addNotes(p, d.notes, &a.sc, a.cfg.Tempo, &f)
	f.Grid = DetectGrid(a.sc.onsets, f.PPQ, a.cfg.Grid)

	resetHist(a.fdt)
	resetHist(a.fdp)
	var err error
	a.stream, _, err = a.enc.Encode(p, tokenize.Identity, a.stream[:0])
	if err == nil {
		err = a.enc.WindowsOf(a.stream, tokenize.Identity, func(w tokenize.Window) error {
			f.Windows++
			a.pc.window(w.Tokens, a.fdt, a.fdp)
			return a.counter.Count(d.tally, w.Tokens)
		})
	}
	if err != nil {
		// A piece the encoder refuses (too long, say) keeps its note statistics and is
		// reported; it has no pairs.
		f.Error = fmt.Sprintf("encode %s: piece %d: %v", path, p.Index, err)
		d.notEncoded++
		resetHist(a.fdt)
		resetHist(a.fdp)
	}
	f.Pairs = a.fdt.N
	f.dtBins = timeBinsFor(a.enc.TimeUnit()).Count(a.fdt)
	f.dpBins = pitchBins.Count(a.fdp)
	f.p50DT, _ = a.fdt.Quantile(0.5)
	f.p50DP, _ = a.fdp.Quantile(0.5)
	d.dt.Merge(a.fdt)
	d.dp.Merge(a.fdp)

	d.pieces++
	d.noteN += int64(f.Notes)
	d.drums += int64(f.drums)
	d.ms += msOf(f.Seconds)
	d.windows += int64(f.Windows)
	d.grids[f.Grid.Label]++
	if f.SMPTE {
		d.ppqs["SMPTE"]++
	} else {
		d.ppqs[fmt.Sprint(f.PPQ)]++
	}
	if f.Tempo.OutOfRange > 0 {
		d.tempoFlagged++
	}
	if f.MissingMeter {
		d.missingMeter++
	}
	a.files = append(a.files, f)
	return nil
}

func resetHist(h *Hist) { h.reset() }

// Merge adds everything b has accumulated to a. b must have the same config.
func (a *Auditor) Merge(b *Auditor) {
	for name, bd := range b.datasets {
		a.dataset(name).merge(bd)
	}
	a.files = append(a.files, b.files...)
	a.skipped = append(a.skipped, b.skipped...)
}

// Report builds the report of everything added so far.
func (a *Auditor) Report() *Report {
	r := &Report{
		TimeUnit: a.enc.TimeUnit(),
		Settings: Settings{
			Encoding: a.cfg.Tokenize.Encoding,
			Pairs:    string(a.counter.Config().Pairs),
			MaxLen:   a.cfg.Tokenize.MaxLen,
			Grid:     a.cfg.Grid,
			Tempo:    a.cfg.Tempo,
			Outlier:  a.cfg.Outlier,
		},
		Comparisons: []Comparison{},
		Outliers:    []Outlier{},
		Coverage:    []Coverage{},
		Skipped:     append([]Skipped{}, a.skipped...),
	}
	if r.TimeUnit == "grid" {
		r.TimeUnit = "grid steps"
	}
	names := make([]string, 0, len(a.datasets))
	for n := range a.datasets {
		names = append(names, n)
	}
	slices.Sort(names)
	tb := timeBinsFor(a.enc.TimeUnit())
	for _, n := range names {
		acc := a.datasets[n]
		ds := &Dataset{
			Name: n, Files: acc.files, Read: acc.read, Skipped: acc.skipped, Duplicates: acc.dups,
			Pieces: acc.pieces, Notes: acc.noteN, Hours: float64(acc.ms) / 3.6e6, Windows: acc.windows,
			IOI:          newDist(acc.notes.IOI, "ms", &timeBins),
			PairDT:       newDist(acc.dt, r.TimeUnit, &tb),
			PairDP:       newDist(acc.dp, "semitones", &pitchBins),
			Duration:     newDist(acc.notes.Duration, "ms", &timeBins),
			Velocity:     newDist(acc.notes.Velocity, "velocity", nil),
			Polyphony:    newDist(acc.notes.Polyphony, "notes", nil),
			Tempo:        newDist(acc.notes.Tempo, "BPM", nil),
			Grids:        sortedCounts(acc.grids),
			PPQs:         sortedCounts(acc.ppqs),
			TempoFlagged: acc.tempoFlagged,
			NotEncoded:   acc.notEncoded,
			MissingMeter: acc.missingMeter,
			acc:          acc,
		}
		if acc.noteN > 0 {
			ds.DrumShare = float64(acc.drums) / float64(acc.noteN)
		}
		r.Datasets = append(r.Datasets, ds)
		r.Coverage = append(r.Coverage, a.coverage(n, acc.tally)...)
	}
	for _, s := range a.counter.Schemes(relpos.Time) {
		r.Schemes = append(r.Schemes, timeScheme(s))
	}
	for _, s := range a.counter.Schemes(relpos.Pitch) {
		r.Schemes = append(r.Schemes, pitchScheme(s))
	}
	r.Files = slices.Clone(a.files)
	slices.SortFunc(r.Files, func(x, y File) int { return cmp.Compare(x.seq, y.seq) })
	r.compare()
	r.findOutliers()
	return r
}

// sortedCounts orders labelled counts by count, most first, then by label.
func sortedCounts(m map[string]int) []Count {
	out := make([]Count, 0, len(m))
	for k, v := range m {
		out = append(out, Count{Label: k, N: v})
	}
	slices.SortFunc(out, func(a, b Count) int {
		if c := cmp.Compare(b.N, a.N); c != 0 {
			return c
		}
		return cmp.Compare(a.Label, b.Label)
	})
	return out
}

// timeBinsFor returns the coarse Δt bins for a stream time unit: half-octave bins
// from 8 ms for ms, from 1 step for grid steps.
func timeBinsFor(unit string) Bins {
	if unit == "grid" {
		return gridStepBins
	}
	return timeBins
}

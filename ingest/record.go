package ingest

import (
	"errors"
	"maps"
	"math"
	"slices"
)

// FileRecord accounts for one input file: every input file of a scan gets exactly one.
// A record with an empty Path stands for a whole source that could not be read (a
// damaged archive, one over a cap).
type FileRecord struct {
	Dataset string `json:"dataset"`
	Source  string `json:"source"` // the source path as given
	Path    string `json:"path"`   // path within the source, with forward slashes
	// Size and SHA256 are those of the MIDI bytes, after gzip decompression of a .gz
	// file, so that x.mid and x.mid.gz are exact duplicates. Zero and empty when the
	// bytes were never read.
	Size          int64         `json:"size"`
	SHA256        string        `json:"sha256,omitempty"`
	Status        Status        `json:"status"`
	Reason        string        `json:"reason,omitempty"`         // why skipped: a one-line error
	DuplicateOf   string        `json:"duplicate_of,omitempty"`   // "dataset/path" of the first copy
	DuplicateKind DuplicateKind `json:"duplicate_kind,omitempty"` // which hash matched
	Warnings      Warnings      `json:"warnings,omitempty"`
	Pieces        int           `json:"pieces"`
	Format        int           `json:"format"`
	// TicksPerQuarter is the division of the file (0 for SMPTE division).
	TicksPerQuarter int     `json:"ticks_per_quarter"`
	Notes           int     `json:"notes"`
	Seconds         float64 `json:"seconds"` // the longest piece, to the end of its last note
}

// Key returns "dataset/path", the name DuplicateOf uses.
func (r *FileRecord) Key() string { return r.Dataset + "/" + r.Path }

// Result is what Scan yields for one input file.
type Result struct {
	Record FileRecord
	// Pieces are set only when the file is ok (or a kept duplicate), with MusicalHash and
	// TransposedHash filled.
	Pieces []Piece
	// Err is why the file was skipped (nil otherwise); errors.Is works with the parse
	// sentinels (ErrTruncated...), the archive ones (ErrUnsafePath...) and the filter
	// ones (ErrTooFewNotes...).
	Err error
}

// ReasonClass returns the kind of a skip reason, for counting reasons: the innermost
// wrapped error's text ("truncated", "not MIDI", "too few notes"), without the file,
// track, offset or measured values. With several wrapped errors it follows the last.
func ReasonClass(err error) string {
	if err == nil {
		return ""
	}
	for {
		switch u := err.(type) {
		case interface{ Unwrap() error }:
			next := u.Unwrap()
			if next == nil {
				return err.Error()
			}
			err = next
		case interface{ Unwrap() []error }:
			errs := u.Unwrap()
			if len(errs) == 0 {
				return err.Error()
			}
			err = errs[len(errs)-1]
		default:
			return err.Error()
		}
	}
}

// DatasetSummary is the inventory of one dataset (or of all). Notes, hours, PPQ,
// formats, drums and tempi count the files that are ok; duplicates and skipped files
// are only counted.
type DatasetSummary struct {
	Dataset    string                `json:"dataset"`
	Files      int                   `json:"files"`
	OK         int                   `json:"ok"`
	Skipped    int                   `json:"skipped"`
	Duplicates int                   `json:"duplicates"`
	SkippedBy  map[string]int        `json:"skipped_by"`    // by ReasonClass
	DupsBy     map[DuplicateKind]int `json:"duplicates_by"` // by kind, kept copies included
	Notes      int64                 `json:"notes"`
	DrumNotes  int64                 `json:"drum_notes"`
	Seconds    float64               `json:"seconds"`
	PPQ        map[int]int           `json:"ppq"`     // files by ticks per quarter (0: SMPTE)
	Formats    map[int]int           `json:"formats"` // files by SMF format
	// MinBPM and MaxBPM span every tempo in effect in ok files (120 when a piece has no
	// Set Tempo event, the SMF 1.0 default); 0 when there is none.
	MinBPM   float64  `json:"min_bpm"`
	MaxBPM   float64  `json:"max_bpm"`
	Warnings Warnings `json:"warnings"`
}

// Hours returns the music duration in hours.
func (d *DatasetSummary) Hours() float64 { return d.Seconds / 3600 }

// DrumShare returns the fraction of notes that are drum notes (0 when there are none).
func (d *DatasetSummary) DrumShare() float64 {
	if d.Notes == 0 {
		return 0
	}
	return float64(d.DrumNotes) / float64(d.Notes)
}

func newDatasetSummary(name string) *DatasetSummary {
	return &DatasetSummary{Dataset: name, SkippedBy: map[string]int{}, DupsBy: map[DuplicateKind]int{},
		PPQ: map[int]int{}, Formats: map[int]int{}, Warnings: Warnings{}}
}

// Summary aggregates scan results per dataset (in the order first seen) and in total.
// Adding the same results in the same order gives the same summary.
type Summary struct {
	Datasets []*DatasetSummary `json:"datasets"`
	Total    *DatasetSummary   `json:"total"`
	index    map[string]*DatasetSummary
}

// NewSummary returns an empty summary.
func NewSummary() *Summary {
	return &Summary{Total: newDatasetSummary("total"), index: map[string]*DatasetSummary{}}
}

// Add counts one result.
func (s *Summary) Add(r *Result) {
	d := s.index[r.Record.Dataset]
	if d == nil {
		d = newDatasetSummary(r.Record.Dataset)
		s.index[r.Record.Dataset] = d
		s.Datasets = append(s.Datasets, d)
	}
	d.add(r)
	s.Total.add(r)
}

func (d *DatasetSummary) add(r *Result) {
	rec := &r.Record
	d.Files++
	switch rec.Status {
	case StatusSkipped:
		d.Skipped++
		class := ReasonClass(r.Err)
		if class == "" {
			class = rec.Reason
		}
		d.SkippedBy[class]++
		return
	case StatusDuplicate:
		d.Duplicates++
		d.DupsBy[rec.DuplicateKind]++
		return
	}
	if rec.DuplicateKind != "" {
		d.DupsBy[rec.DuplicateKind]++ // a copy kept by Options.KeepDuplicates
	}
	d.OK++
	d.PPQ[rec.TicksPerQuarter]++
	d.Formats[rec.Format]++
	d.Seconds += rec.Seconds
	for _, k := range slices.Sorted(maps.Keys(rec.Warnings)) {
		d.Warnings.Add(k, rec.Warnings[k])
	}
	for i := range r.Pieces {
		p := &r.Pieces[i]
		d.Notes += int64(len(p.Notes))
		for j := range p.Notes {
			if p.Notes[j].Drum {
				d.DrumNotes++
			}
		}
		if p.SMPTEFPS > 0 {
			continue
		}
		if len(p.Tempos) == 0 || p.Tempos[0].Tick > 0 {
			d.bpm(defaultUSPerQuarter)
		}
		for _, t := range p.Tempos {
			d.bpm(t.USPerQuarter)
		}
	}
}

func (d *DatasetSummary) bpm(us uint32) {
	if us == 0 {
		return
	}
	b := math.Round(60e6/float64(us)*1000) / 1000
	if d.MinBPM == 0 || b < d.MinBPM {
		d.MinBPM = b
	}
	if b > d.MaxBPM {
		d.MaxBPM = b
	}
}

// isBadInput reports whether a skip is due to bad or hostile input (what Strict stops
// at), rather than a filter rule or a non-MIDI archive entry.
func isBadInput(err error) bool {
	return err != nil && !isFilterError(err) && !errors.Is(err, ErrNotMIDI)
}

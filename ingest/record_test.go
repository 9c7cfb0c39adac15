package ingest

import (
	"errors"
	"fmt"
	"math"
	"reflect"
	"testing"
)

func TestSummary(t *testing.T) {
	dir, _ := mixedFolder(t)
	s := NewSummary()
	for _, r := range scanAll(t, []Source{{Path: dir}}, mixedOptions(3)) {
		s.Add(r)
	}
	got := *s.Total
	// Ends of the last notes, at 120 BPM (SMF 1.0 default tempo): 10/3 quarters, 7.5,
	// 1, 0.375 and 100/192.
	wantSecs := (10.0/3 + 7.5 + 1 + 0.375 + 100.0/192) / 2
	if math.Abs(got.Seconds-wantSecs) > 1e-9 {
		t.Errorf("seconds %g, want %g", got.Seconds, wantSecs)
	}
	got.Seconds = wantSecs
	want := DatasetSummary{
		Dataset: "total", Files: 19, OK: 5, Skipped: 11, Duplicates: 3,
		SkippedBy: map[string]int{
			ErrTooLarge.Error(): 2, ErrNotGzip.Error(): 1, ErrChunkLength.Error(): 1, ErrBadMagic.Error(): 1, ErrEmpty.Error(): 1,
			ErrNotMIDI.Error(): 2, ErrUnsafePath.Error(): 1, ErrLinkEntry.Error(): 1, ErrTooFewNotes.Error(): 1,
		},
		DupsBy:    map[DuplicateKind]int{DupExact: 1, DupMusical: 1, DupTransposed: 1},
		Notes:     3 + 8 + 2 + 3 + 2,
		DrumNotes: 3,
		Seconds:   wantSecs,
		PPQ:       map[int]int{96: 1, 120: 1, 192: 1, 240: 1, 480: 1},
		Formats:   map[int]int{0: 5},
		MinBPM:    120, MaxBPM: 120,
		Warnings: Warnings{},
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("total:\n got %+v\nwant %+v", got, want)
	}
	if len(s.Datasets) != 1 || s.Datasets[0].Dataset != "mixed" || s.Datasets[0].Files != 19 {
		t.Errorf("datasets: %+v", s.Datasets)
	}
	if share := got.DrumShare(); share != 3.0/18 {
		t.Errorf("drum share %g", share)
	}
}

func TestSummaryTempoRange(t *testing.T) {
	s := NewSummary()
	s.Add(&Result{Record: FileRecord{Dataset: "d", Status: StatusOK}, Pieces: []Piece{
		{Tempos: []Tempo{{0, 400000}, {96, 1000000}}}, // 150 and 60 BPM
		{Tempos: []Tempo{{480, 250000}}},              // 120 BPM before tick 480, then 240
		{SMPTEFPS: 25, Tempos: []Tempo{{0, 100}}},     // SMPTE: no tempo
	}})
	if got := [2]float64{s.Total.MinBPM, s.Total.MaxBPM}; got != [2]float64{60, 240} {
		t.Errorf("tempo range %v, want [60 240]", got)
	}
}

func TestReasonClass(t *testing.T) {
	pe := &ParseError{File: "x.mid", Track: 2, Offset: 40, Err: fmt.Errorf("%w: 3 bytes left", ErrTruncated)}
	tests := []struct {
		err  error
		want string
	}{
		{nil, ""},
		{pe, "truncated"},
		{fmt.Errorf("read zip: %w: %w", errors.New("zip: not a valid zip file"), ErrBadArchive), "damaged archive"},
		{fmt.Errorf("12 notes, minimum 20: %w", ErrTooFewNotes), "too few notes"},
		{errors.New("plain"), "plain"},
	}
	for _, tt := range tests {
		if got := ReasonClass(tt.err); got != tt.want {
			t.Errorf("ReasonClass(%v) = %q, want %q", tt.err, got, tt.want)
		}
	}
}

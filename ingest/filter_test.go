package ingest

import (
	"errors"
	"testing"
)

func TestFilter(t *testing.T) {
	// Three key notes (40, 60, 80) and one drum, ending at 2 s.
	pieces := func() []Piece {
		return []Piece{{Notes: []Note{
			{Pitch: 40, End: 1}, {Pitch: 60, End: 2}, {Pitch: 80, End: 1.5}, {Pitch: 36, Drum: true, Channel: 9, End: 0.5},
		}}}
	}
	drumsOnly := []Piece{{Notes: []Note{{Pitch: 36, Drum: true, End: 1}}}}
	tests := []struct {
		name      string
		f         Filter
		in        []Piece
		wantErr   error
		wantNotes int
		wantSecs  float64
	}{
		{"no rules", Filter{}, pieces(), nil, 4, 2},
		{"min notes met", Filter{MinNotes: 4}, pieces(), nil, 4, 2},
		{"too few", Filter{MinNotes: 5}, pieces(), ErrTooFewNotes, 4, 2},
		{"too many", Filter{MaxNotes: 3}, pieces(), ErrTooManyNotes, 4, 2},
		{"too short", Filter{MinSeconds: 2.5}, pieces(), ErrTooShort, 4, 2},
		{"too long", Filter{MaxSeconds: 1.9}, pieces(), ErrTooLong, 4, 2},
		{"drop drums", Filter{DropDrums: true, MaxNotes: 3}, pieces(), nil, 3, 2},
		{"only drums", Filter{DropDrums: true}, drumsOnly, ErrOnlyDrums, 0, 0},
		{"pitch below", Filter{MinPitch: 41}, pieces(), ErrPitchRange, 4, 2},
		{"pitch above", Filter{MaxPitch: 79}, pieces(), ErrPitchRange, 4, 2},
		{"pitch range ignores drums", Filter{MinPitch: 40, MaxPitch: 80}, pieces(), nil, 4, 2},
		{"empty file with no rules", Filter{}, []Piece{{}}, nil, 0, 0},
	}
	for _, tt := range tests {
		st, err := tt.f.apply(tt.in)
		if !errors.Is(err, tt.wantErr) || (err == nil) != (tt.wantErr == nil) {
			t.Errorf("%s: err %v, want %v", tt.name, err, tt.wantErr)
		}
		if err != nil && !isFilterError(err) {
			t.Errorf("%s: %v not a filter error", tt.name, err)
		}
		if st.notes != tt.wantNotes || st.seconds != tt.wantSecs {
			t.Errorf("%s: %d notes %g s, want %d %g", tt.name, st.notes, st.seconds, tt.wantNotes, tt.wantSecs)
		}
	}
}

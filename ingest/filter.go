package ingest

import (
	"errors"
	"fmt"
	"slices"
)

// Filter selects which parsed files are kept. A zero field is no limit. A file that
// fails a rule is skipped with that rule as its reason (the first failed rule, in the
// order of the fields). The counts are over all pieces of a file (format 2: all its
// tracks); the duration is that of its longest piece, to the end of its last note.
type Filter struct {
	MinNotes, MaxNotes     int
	MinSeconds, MaxSeconds float64
	// DropDrums removes drum notes (channel index 9) before the other rules and the
	// duplicate hashes; a file left with no notes is skipped with ErrOnlyDrums.
	DropDrums bool
	// MinPitch and MaxPitch bound the keys of the non-drum notes; a file with a key
	// outside is skipped. MaxPitch 0 means no upper bound.
	MinPitch, MaxPitch int
}

// Filter rules, wrapped with the measured value; test with errors.Is.
var (
	ErrTooFewNotes   = errors.New("too few notes")
	ErrTooManyNotes  = errors.New("too many notes")
	ErrTooShort      = errors.New("too short")
	ErrTooLong       = errors.New("too long")
	ErrOnlyDrums     = errors.New("only drum notes")
	ErrPitchRange    = errors.New("pitch out of range")
	errFilterClasses = []error{ErrTooFewNotes, ErrTooManyNotes, ErrTooShort, ErrTooLong, ErrOnlyDrums, ErrPitchRange}
)

// isFilterError reports whether err is a filter rule rather than bad input.
func isFilterError(err error) bool {
	for _, c := range errFilterClasses {
		if errors.Is(err, c) {
			return true
		}
	}
	return false
}

// pieceStats are the file-level numbers the filter and the record use.
type pieceStats struct {
	notes, drums       int
	seconds            float64
	minPitch, maxPitch int // over non-drum notes; minPitch > maxPitch when there are none
}

func statsOf(pieces []Piece) pieceStats {
	s := noStats()
	for i := range pieces {
		for j := range pieces[i].Notes {
			n := &pieces[i].Notes[j]
			s.notes++
			s.seconds = max(s.seconds, n.End)
			if n.Drum {
				s.drums++
				continue
			}
			s.minPitch = min(s.minPitch, int(n.Pitch))
			s.maxPitch = max(s.maxPitch, int(n.Pitch))
		}
	}
	return s
}

// noStats are the stats of no notes.
func noStats() pieceStats { return pieceStats{minPitch: 128, maxPitch: -1} }

// add counts the stats of more notes in s.
func (s *pieceStats) add(t pieceStats) {
	s.notes += t.notes
	s.drums += t.drums
	s.seconds = max(s.seconds, t.seconds)
	s.minPitch = min(s.minPitch, t.minPitch)
	s.maxPitch = max(s.maxPitch, t.maxPitch)
}

// apply drops drum notes when asked (in place) and checks the rules, returning the
// stats of what is kept and the first failed rule.
func (f *Filter) apply(pieces []Piece) (pieceStats, error) {
	had := f.dropDrums(pieces)
	s := statsOf(pieces)
	return s, f.check(s, had)
}

// dropDrums removes the drum notes when the filter asks for it, and reports whether
// any piece had notes before.
func (f *Filter) dropDrums(pieces []Piece) (had bool) {
	if !f.DropDrums {
		return false
	}
	for i := range pieces {
		before := len(pieces[i].Notes)
		pieces[i].Notes = slices.DeleteFunc(pieces[i].Notes, func(n Note) bool { return n.Drum })
		had = had || before > 0
	}
	return had
}

// check returns the first rule that the stats s of what is kept fail; had is what
// dropDrums returned.
func (f *Filter) check(s pieceStats, had bool) error {
	if f.DropDrums && s.notes == 0 && had {
		return ErrOnlyDrums
	}
	switch {
	case f.MinNotes > 0 && s.notes < f.MinNotes:
		return fmt.Errorf("%d notes, minimum %d: %w", s.notes, f.MinNotes, ErrTooFewNotes)
	case f.MaxNotes > 0 && s.notes > f.MaxNotes:
		return fmt.Errorf("%d notes, maximum %d: %w", s.notes, f.MaxNotes, ErrTooManyNotes)
	case f.MinSeconds > 0 && s.seconds < f.MinSeconds:
		return fmt.Errorf("%.3g s, minimum %g s: %w", s.seconds, f.MinSeconds, ErrTooShort)
	case f.MaxSeconds > 0 && s.seconds > f.MaxSeconds:
		return fmt.Errorf("%.4g s, maximum %g s: %w", s.seconds, f.MaxSeconds, ErrTooLong)
	case s.maxPitch >= 0 && s.minPitch < f.MinPitch:
		return fmt.Errorf("key %d below minimum %d: %w", s.minPitch, f.MinPitch, ErrPitchRange)
	case f.MaxPitch > 0 && s.maxPitch > f.MaxPitch:
		return fmt.Errorf("key %d above maximum %d: %w", s.maxPitch, f.MaxPitch, ErrPitchRange)
	}
	return nil
}

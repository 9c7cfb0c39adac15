package audit

import (
	"math"
	"slices"

	"github.com/relshard/relshard/ingest"
)

// Ranges of the exact histograms. Values outside are counted in the tails, with
// their extremes kept.
const (
	maxIntervalMS = 3_600_000 // inter-onset intervals and durations, ms: an hour
	maxBPM        = 1_000
	maxPolyphony  = 128
)

// TempoRange is the plausible tempo range; tempos outside it are flagged.
type TempoRange struct {
	MinBPM float64 `json:"min_bpm"`
	MaxBPM float64 `json:"max_bpm"`
}

// noteStats are the distributions built from the notes of pieces (not from tokens).
type noteStats struct {
	IOI       *Hist // ms between successive distinct onsets
	Duration  *Hist // ms
	Velocity  *Hist // 1..127
	Polyphony *Hist // pitched notes sounding at each distinct onset
	Tempo     *Hist // BPM in effect at each onset, rounded
}

func newNoteStats() *noteStats {
	return &noteStats{
		IOI:       newWideHist(0, maxIntervalMS, exactBelow),
		Duration:  newWideHist(0, maxIntervalMS, exactBelow),
		Velocity:  newHist(0, 127),
		Polyphony: newHist(0, maxPolyphony),
		Tempo:     newHist(0, maxBPM),
	}
}

func (s *noteStats) merge(o *noteStats) {
	s.IOI.Merge(o.IOI)
	s.Duration.Merge(o.Duration)
	s.Velocity.Merge(o.Velocity)
	s.Polyphony.Merge(o.Polyphony)
	s.Tempo.Merge(o.Tempo)
}

// TempoCheck is the tempo-map sanity of one piece.
type TempoCheck struct {
	Events     int     `json:"events"`       // Set Tempo events
	MinBPM     float64 `json:"min_bpm"`      // slowest tempo in the map (120 when none: SMF 1.0 default)
	MaxBPM     float64 `json:"max_bpm"`      // fastest
	OutOfRange int     `json:"out_of_range"` // events outside the plausible range
}

// pieceScratch holds buffers reused from one piece to the next.
type pieceScratch struct {
	onsets []int64
	ends   []int64
	ms     []int64
}

// usToBPM converts a Set Tempo value to beats (quarter notes) per minute.
func usToBPM(us uint32) float64 {
	if us == 0 {
		return math.Inf(1)
	}
	return 60e6 / float64(us)
}

// addNotes adds the note-level distributions of p to s and fills the per-file facts.
// Onset ticks for grid detection are returned in sc.onsets.
func addNotes(p *ingest.Piece, s *noteStats, sc *pieceScratch, rng TempoRange, f *File) {
	notes := p.Notes
	f.Notes = len(notes)
	f.PPQ = p.TicksPerQuarter
	if p.SMPTEFPS != 0 {
		f.PPQ = 0
		f.SMPTE = true
	}
	f.MissingMeter = len(p.Meters) == 0

	// Tempo map sanity.
	tc := TempoCheck{Events: len(p.Tempos), MinBPM: 120, MaxBPM: 120}
	for i, t := range p.Tempos {
		b := usToBPM(t.USPerQuarter)
		if i == 0 {
			tc.MinBPM, tc.MaxBPM = b, b
		}
		tc.MinBPM = min(tc.MinBPM, b)
		tc.MaxBPM = max(tc.MaxBPM, b)
		// SMPTE time is in frames: tempo events do not move notes, so none is flagged.
		if (b < rng.MinBPM || b > rng.MaxBPM) && p.SMPTEFPS == 0 {
			tc.OutOfRange++
		}
	}
	if math.IsInf(tc.MaxBPM, 1) {
		tc.MaxBPM = math.MaxFloat64 // JSON has no infinity; a zero tempo is flagged anyway
	}
	f.Tempo = tc

	sc.onsets = sc.onsets[:0]
	sc.ends = sc.ends[:0]
	sc.ms = sc.ms[:0]
	var drums int
	ti := -1 // index of the tempo in effect; -1 before the first: the SMF 1.0 default
	for i := range notes {
		n := &notes[i]
		sc.onsets = append(sc.onsets, n.StartTick)
		s.Velocity.Add(int64(n.Velocity))
		s.Duration.Add(msOf(n.End - n.Start))
		sc.ms = append(sc.ms, msOf(n.Start))
		if n.Drum {
			drums++
		} else {
			sc.ends = append(sc.ends, n.EndTick)
		}
		for ti+1 < len(p.Tempos) && p.Tempos[ti+1].Tick <= n.StartTick {
			ti++
		}
		if !f.SMPTE {
			bpm := 120.0
			if ti >= 0 {
				bpm = usToBPM(p.Tempos[ti].USPerQuarter)
			}
			s.Tempo.Add(roundBPM(bpm))
		}
	}
	f.drums = drums
	if len(notes) > 0 {
		f.DrumShare = float64(drums) / float64(len(notes))
		for i := range notes {
			f.Seconds = max(f.Seconds, notes[i].End)
		}
	}

	// Inter-onset intervals between successive distinct onsets, in ms. Notes are sorted
	// by start tick, so start times are non-decreasing.
	slices.Sort(sc.ms)
	for i := 1; i < len(sc.ms); i++ {
		if d := sc.ms[i] - sc.ms[i-1]; d > 0 {
			s.IOI.Add(d)
		}
	}

	// Polyphony of pitched notes at each distinct onset of a pitched note: notes started
	// at or before the tick minus notes ended at or before it.
	slices.Sort(sc.ends)
	started, ended := 0, 0
	for i := 0; i < len(notes); {
		t := notes[i].StartTick
		any := false
		for i < len(notes) && notes[i].StartTick == t {
			if !notes[i].Drum {
				started++
				any = true
			}
			i++
		}
		for ended < len(sc.ends) && sc.ends[ended] <= t {
			ended++
		}
		if any {
			s.Polyphony.Add(int64(started - ended))
		}
	}
}

func msOf(sec float64) int64 {
	if math.IsNaN(sec) || sec < 0 {
		return 0
	}
	return int64(math.Round(sec * 1000))
}

func roundBPM(b float64) int64 {
	if math.IsInf(b, 1) || b > 1e9 {
		return 1e9
	}
	return int64(math.Round(b))
}

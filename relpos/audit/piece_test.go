package audit

import (
	"reflect"
	"testing"

	"github.com/relshard/relshard/ingest"
)

// smfSpecExample is the format-0 example file of the SMF 1.0 specification (its
// appendix on MIDI file examples): 96 ticks per quarter, 4/4, 500,000 µs per
// quarter, a chord built up note by note on three channels and released together.
var smfSpecExample = []byte{
	'M', 'T', 'h', 'd', 0, 0, 0, 6, 0, 0, 0, 1, 0, 0x60,
	'M', 'T', 'r', 'k', 0, 0, 0, 0x3B,
	0x00, 0xFF, 0x58, 0x04, 0x04, 0x02, 0x18, 0x08, // time signature 4/4
	0x00, 0xFF, 0x51, 0x03, 0x07, 0xA1, 0x20, // tempo 500,000 µs per quarter
	0x00, 0xC0, 0x05,
	0x00, 0xC1, 0x2E,
	0x00, 0xC2, 0x46,
	0x00, 0x92, 0x30, 0x60, // C3 on, channel 3, velocity 96
	0x00, 0x3C, 0x60, // C4 on, running status
	0x60, 0x91, 0x43, 0x40, // G4 on, channel 2, velocity 64, at tick 96
	0x60, 0x90, 0x4C, 0x20, // E5 on, channel 1, velocity 32, at tick 192
	0x81, 0x40, 0x82, 0x30, 0x40, // at tick 384: C3 off
	0x00, 0x3C, 0x40, // C4 off
	0x00, 0x81, 0x43, 0x40, // G4 off
	0x00, 0x80, 0x4C, 0x40, // E5 off
	0x00, 0xFF, 0x2F, 0x00,
}

// The note-level distributions of the SMF 1.0 example, worked out from the
// specification's description: onsets at 0, 0.5 and 1.0 s (ticks 0, 96, 192 at 120
// BPM); notes of 2.0, 2.0, 1.5 and 1.0 s at velocities 96, 96, 64 and 32; two, three
// and four notes sounding at the three onsets.
func TestNoteStatsSMFExample(t *testing.T) {
	pieces, err := ingest.Parse("spec.mid", smfSpecExample, ingest.DefaultParseOptions())
	if err != nil {
		t.Fatal(err)
	}
	s := newNoteStats()
	var sc pieceScratch
	var f File
	addNotes(&pieces[0], s, &sc, TempoRange{MinBPM: 20, MaxBPM: 400}, &f)
	check := func(name string, h *Hist, want map[int64]int64) {
		t.Helper()
		got := summary(h)
		delete(got, -1<<40)
		delete(got, 1<<40)
		if !reflect.DeepEqual(got, want) {
			t.Errorf("%s: %v, want %v", name, got, want)
		}
	}
	check("inter-onset intervals", s.IOI, map[int64]int64{500: 2})
	check("durations", s.Duration, map[int64]int64{2000: 2, 1500: 1, 1000: 1})
	check("velocities", s.Velocity, map[int64]int64{96: 2, 64: 1, 32: 1})
	check("polyphony", s.Polyphony, map[int64]int64{2: 1, 3: 1, 4: 1})
	check("tempo", s.Tempo, map[int64]int64{120: 4})
	want := File{Notes: 4, PPQ: 96, Seconds: 2, Tempo: TempoCheck{Events: 1, MinBPM: 120, MaxBPM: 120}}
	f.drums = 0
	if !reflect.DeepEqual(f, want) {
		t.Errorf("file facts %+v, want %+v", f, want)
	}
	if got := sc.onsets; !reflect.DeepEqual(got, []int64{0, 0, 96, 192}) {
		t.Errorf("onsets %v", got)
	}
}

func TestTempoFlags(t *testing.T) {
	// 60,000,000 / µs per quarter = BPM (SMF 1.0 Set Tempo): 4,000,000 µs is 15 BPM,
	// 100,000 µs is 600 BPM; both outside 20–400.
	p := ingest.Piece{TicksPerQuarter: 96, Tempos: []ingest.Tempo{{Tick: 0, USPerQuarter: 4_000_000}, {Tick: 96, USPerQuarter: 500_000}, {Tick: 192, USPerQuarter: 100_000}}}
	var f File
	addNotes(&p, newNoteStats(), &pieceScratch{}, TempoRange{MinBPM: 20, MaxBPM: 400}, &f)
	if want := (TempoCheck{Events: 3, MinBPM: 15, MaxBPM: 600, OutOfRange: 2}); f.Tempo != want {
		t.Errorf("tempo check %+v, want %+v", f.Tempo, want)
	}
	if !f.MissingMeter {
		t.Error("no time signature, but not reported missing")
	}
}

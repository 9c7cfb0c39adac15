package tokenize

import (
	"bytes"
	"errors"
	"slices"
	"testing"

	"github.com/relshard/relshard/ingest"
	"gitlab.com/gomidi/midi/v2/smf"
)

type refNote struct {
	on, off            int64
	ch, key, vel, prog uint8
}

// readWithGomidi reads an SMF with gomidi, an independent reader, pairing note-ons
// with the next note-off of the same channel and key.
func readWithGomidi(t *testing.T, data []byte) (notes []refNote, tempos []float64, meters [][2]uint8, tpq int) {
	t.Helper()
	s, err := smf.ReadFrom(bytes.NewReader(data))
	if err != nil {
		t.Fatalf("gomidi: %v", err)
	}
	mt, ok := s.TimeFormat.(smf.MetricTicks)
	if !ok {
		t.Fatalf("time format %v, want metric", s.TimeFormat)
	}
	for _, tr := range s.Tracks {
		var abs int64
		var prog [16]uint8
		open := map[[2]uint8]int{}
		for _, ev := range tr {
			abs += int64(ev.Delta)
			var ch, key, vel, p uint8
			var bpm float64
			var num, den uint8
			switch {
			case ev.Message.GetNoteStart(&ch, &key, &vel):
				notes = append(notes, refNote{on: abs, ch: ch, key: key, vel: vel, prog: prog[ch]})
				open[[2]uint8{ch, key}] = len(notes)
			case ev.Message.GetNoteEnd(&ch, &key):
				if i := open[[2]uint8{ch, key}]; i != 0 {
					notes[i-1].off = abs
					delete(open, [2]uint8{ch, key})
				}
			case ev.Message.GetProgramChange(&ch, &p):
				prog[ch] = p
			case ev.Message.GetMetaTempo(&bpm):
				tempos = append(tempos, bpm)
			case ev.Message.GetMetaMeter(&num, &den):
				meters = append(meters, [2]uint8{num, den})
			}
		}
	}
	slices.SortFunc(notes, func(a, b refNote) int {
		if a.on != b.on {
			return int(a.on - b.on)
		}
		if a.ch != b.ch {
			return int(a.ch) - int(b.ch)
		}
		return int(a.key) - int(b.key)
	})
	return notes, tempos, meters, int(mt)
}

func TestWriteSMF(t *testing.T) {
	cfg := gridConfig()
	cfg.Drums = DrumsKeep
	e := mustEncoder(t, cfg)
	p := piece(t, "p0/0:480:60:100", "p33/0:960:40:70", "d0:120:36:110", "p40/480:240:67:50", "d480:120:38:90", "p0/1920:0:72:60")
	p.Meters = []ingest.Meter{{Tick: 0, Num: 3, Denom: 4}}
	p.Tempos = []ingest.Tempo{{Tick: 0, USPerQuarter: 600000}}
	s, _, err := e.Encode(p, Identity, nil)
	if err != nil {
		t.Fatal(err)
	}
	dp, err := Decode(ids(s), cfg)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := WriteSMF(&buf, dp); err != nil {
		t.Fatal(err)
	}
	notes, tempos, meters, tpq := readWithGomidi(t, buf.Bytes())
	if tpq != dp.TicksPerQuarter {
		t.Errorf("division %d, want %d", tpq, dp.TicksPerQuarter)
	}
	var want []refNote
	for _, n := range dp.Notes {
		want = append(want, refNote{on: n.StartTick, off: n.EndTick, ch: n.Channel, key: n.Pitch, vel: n.Velocity, prog: n.Program})
	}
	if !slices.Equal(notes, want) {
		t.Errorf("gomidi read back\n got %+v\nwant %+v", notes, want)
	}
	for _, n := range notes {
		if (n.key == 36 || n.key == 38) != (n.ch == 9) {
			// General MIDI 1: percussion on channel 10 (index 9).
			t.Errorf("note %+v: drums must be on channel index 9, others not", n)
		}
	}
	// Tempo 600,000 µs per quarter is 100 BPM; it falls in a tempo bin whose centre is
	// written; meter 3/4 as written.
	if len(tempos) != 1 || len(meters) != 1 || meters[0] != [2]uint8{3, 4} {
		t.Errorf("tempos %v meters %v", tempos, meters)
	}
	if want := e.vocab.tempoBPM[e.vocab.tempoBin(100)]; len(tempos) == 1 && (tempos[0] < want-0.01 || tempos[0] > want+0.01) {
		t.Errorf("tempo %.3f BPM, want %.3f", tempos[0], want)
	}

	// Our own reader agrees too.
	back, err := ingest.Parse("decoded.mid", buf.Bytes(), ingest.ParseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var got []refNote
	for _, n := range back[0].Notes {
		got = append(got, refNote{on: n.StartTick, off: n.EndTick, ch: n.Channel, key: n.Pitch, vel: n.Velocity, prog: n.Program})
	}
	if !slices.Equal(got, want) {
		t.Errorf("ingest read back\n got %+v\nwant %+v", got, want)
	}
}

func TestWriteSMFErrors(t *testing.T) {
	tests := []struct {
		name string
		p    ingest.Piece
	}{
		{"zero division", ingest.Piece{TicksPerQuarter: 0}},
		{"division over 15 bits", ingest.Piece{TicksPerQuarter: 40000}},
		{"meter not a power of two", ingest.Piece{TicksPerQuarter: 96, Meters: []ingest.Meter{{Num: 3, Denom: 6}}}},
		{"zero tempo", ingest.Piece{TicksPerQuarter: 96, Tempos: []ingest.Tempo{{USPerQuarter: 0}}}},
		{"key out of range", ingest.Piece{TicksPerQuarter: 96, Notes: []ingest.Note{{Pitch: 200, EndTick: 1}}}},
		{"end before start", ingest.Piece{TicksPerQuarter: 96, Notes: []ingest.Note{{Pitch: 60, StartTick: 5, EndTick: 1}}}},
		{"delta past four bytes", ingest.Piece{TicksPerQuarter: 96, Notes: []ingest.Note{{Pitch: 60, StartTick: 1 << 29, EndTick: 1 << 29}}}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if err := WriteSMF(&bytes.Buffer{}, &tc.p); !errors.Is(err, ErrNotWritable) {
				t.Errorf("got %v, want ErrNotWritable", err)
			}
		})
	}
}

// TestPerformanceSMFTiming checks that a decoded performance file plays at the
// decoded milliseconds: 500 ticks per quarter at the SMF 1.0 default tempo of
// 500,000 µs per quarter is one tick per millisecond.
func TestPerformanceSMFTiming(t *testing.T) {
	cfg := DefaultConfig()
	e := mustEncoder(t, cfg)
	s, _, err := e.Encode(piece(t, "960:480:60"), Identity, nil) // 1000 ms .. 1500 ms
	if err != nil {
		t.Fatal(err)
	}
	dp, err := Decode(ids(s), cfg)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := WriteSMF(&buf, dp); err != nil {
		t.Fatal(err)
	}
	sm, err := smf.ReadFrom(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	var ons []int64
	for _, tr := range sm.Tracks {
		var abs int64
		for _, ev := range tr {
			abs += int64(ev.Delta)
			if ev.Message.GetNoteStart(nil, nil, nil) || ev.Message.GetNoteEnd(nil, nil) {
				ons = append(ons, sm.TimeAt(abs)/1000) // µs to ms
			}
		}
	}
	if !slices.Equal(ons, []int64{1000, 1500}) {
		t.Errorf("note times %v ms, want [1000 1500]", ons)
	}
}

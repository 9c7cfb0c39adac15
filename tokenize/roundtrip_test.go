package tokenize

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/relshard/relshard/ingest"
)

// randomPiece builds a deterministic piece with off-grid times: per key, notes that do
// not overlap and start at least 20 ms apart, so no key sounds twice at once.
func randomPiece(seed uint64, n int, drums bool) *ingest.Piece {
	r := rand.New(rand.NewPCG(seed, 1))
	p := &ingest.Piece{TicksPerQuarter: 480, Format: 1}
	var free [2][128]int64
	for len(p.Notes) < n {
		drum := drums && r.IntN(5) == 0
		d := 0
		if drum {
			d = 1
		}
		key := 21 + r.IntN(88)
		start := free[d][key] + 20 + int64(r.IntN(3000))
		length := int64(1 + r.IntN(1500))
		free[d][key] = start + length
		note := ingest.Note{StartTick: start, EndTick: start + length, Pitch: uint8(key), Velocity: uint8(1 + r.IntN(127))}
		if drum {
			note.Drum, note.Channel = true, 9
		}
		note.Start, note.End = float64(note.StartTick)/960, float64(note.EndTick)/960
		p.Notes = append(p.Notes, note)
	}
	return p
}

// keyed groups notes by drum flag and key, in onset order (notes come sorted by onset).
func keyed(notes []ingest.Note) map[[2]int][]ingest.Note {
	m := map[[2]int][]ingest.Note{}
	for _, n := range notes {
		k := [2]int{int(n.Pitch), 0}
		if n.Drum {
			k[1] = 1
		}
		m[k] = append(m[k], n)
	}
	return m
}

func TestRoundTripPerformance(t *testing.T) {
	for _, shift := range []int{10, 8, 25} {
		cfg := DefaultConfig()
		cfg.Drums = DrumsKeep
		cfg.ShiftMS, cfg.MaxShiftMS = shift, 100*shift
		e := mustEncoder(t, cfg)
		p := randomPiece(uint64(shift), 3000, true)
		sortNotes(p.Notes)
		s, st, err := e.Encode(p, Identity, nil)
		if err != nil {
			t.Fatal(err)
		}
		if st.Merged != 0 || st.Retriggered != 0 || st.Encoded != len(p.Notes) {
			t.Fatalf("shift %d: stats %+v; the piece has no same-key overlaps", shift, st)
		}
		dp, err := Decode(ids(s), cfg)
		if err != nil {
			t.Fatal(err)
		}
		// Time-shift quantization error is at most half a step (common practice).
		half := float64(shift) / 2 / 1000
		const eps = 1e-9
		want, got := keyed(p.Notes), keyed(dp.Notes)
		for k, ws := range want {
			gs := got[k]
			if len(gs) != len(ws) {
				t.Fatalf("shift %d key %v: %d notes decoded, want %d", shift, k, len(gs), len(ws))
			}
			for i, w := range ws {
				g := gs[i]
				if math.Abs(g.Start-w.Start) > half+eps {
					t.Errorf("shift %d key %v note %d: onset %.4f s, want %.4f ± %.4f", shift, k, i, g.Start, w.Start, half)
				}
				if !w.Drum && math.Abs(g.End-w.End) > half+eps {
					t.Errorf("shift %d key %v note %d: release %.4f s, want %.4f ± %.4f", shift, k, i, g.End, w.End, half)
				}
				if w.Drum && g.Channel != 9 {
					// General MIDI 1: percussion on channel 10 (index 9).
					t.Errorf("drum decoded on channel index %d, want 9", g.Channel)
				}
				if e.vocab.velBin(g.Velocity) != e.vocab.velBin(w.Velocity) {
					t.Errorf("shift %d key %v note %d: velocity %d outside the bin of %d", shift, k, i, g.Velocity, w.Velocity)
				}
			}
		}
	}
}

func TestRoundTripGridOnGrid(t *testing.T) {
	cfg := gridConfig()
	cfg.Drums = DrumsKeep
	e := mustEncoder(t, cfg)
	r := rand.New(rand.NewPCG(7, 7))
	p := &ingest.Piece{TicksPerQuarter: 96, Format: 1, // 8 ticks a step
		Meters: []ingest.Meter{{Tick: 0, Num: 4, Denom: 4}, {Tick: 96 * 8, Num: 6, Denom: 8}, {Tick: 96*8 + 96*3*4, Num: 5, Denom: 4}},
		Tempos: []ingest.Tempo{{Tick: 0, USPerQuarter: 600000}, {Tick: 96 * 8, USPerQuarter: 400000}}}
	for i := 0; i < 2000; i++ {
		start := int64(r.IntN(12*400)) * 8
		n := ingest.Note{StartTick: start, EndTick: start + int64(1+r.IntN(96))*8, Pitch: uint8(r.IntN(128)),
			Velocity: uint8(1 + r.IntN(127)), Program: uint8(r.IntN(128))}
		if r.IntN(6) == 0 {
			n.Drum, n.Channel, n.Program = true, 9, 0
		}
		p.Notes = append(p.Notes, n)
	}
	sortNotes(p.Notes)
	s, st, err := e.Encode(p, Identity, nil)
	if err != nil {
		t.Fatal(err)
	}
	if st.Encoded != len(p.Notes) || st.MetersMoved != 0 || st.MetersUnsupported != 0 {
		t.Fatalf("stats %+v", st)
	}
	dp, err := Decode(ids(s), cfg)
	if err != nil {
		t.Fatal(err)
	}
	// On-grid input: onset tick, key and duration exact (scaled from 96 to the
	// decoded resolution), velocity within its bin, instrument family kept.
	scale := int64(dp.TicksPerQuarter / p.TicksPerQuarter)
	type key struct {
		on, end int64
		pitch   uint8
		drum    bool
		family  uint8
		velBin  int
	}
	count := map[key]int{}
	for _, n := range p.Notes {
		count[key{n.StartTick * scale, n.EndTick * scale, n.Pitch, n.Drum, n.Program / 8, e.vocab.velBin(n.Velocity)}]++
	}
	for _, n := range dp.Notes {
		k := key{n.StartTick, n.EndTick, n.Pitch, n.Drum, n.Program / 8, e.vocab.velBin(n.Velocity)}
		if count[k] == 0 {
			t.Fatalf("decoded note %+v has no counterpart in the piece", n)
		}
		count[k]--
		if n.Drum != (n.Channel == 9) {
			t.Errorf("decoded note %+v: drums belong on channel index 9 (General MIDI 1)", n)
		}
	}
	if len(dp.Notes) != len(p.Notes) {
		t.Fatalf("%d notes decoded, want %d", len(dp.Notes), len(p.Notes))
	}
	// The meter map survives: 4/4, 6/8, 5/4 at the same bar lines.
	wantMeters := []ingest.Meter{{Tick: 0, Num: 4, Denom: 4}, {Tick: 8 * 96 * scale, Num: 6, Denom: 8}, {Tick: (96*8 + 96*3*4) * scale, Num: 5, Denom: 4}}
	if len(dp.Meters) != len(wantMeters) {
		t.Fatalf("meters %+v, want %+v", dp.Meters, wantMeters)
	}
	for i := range wantMeters {
		if dp.Meters[i] != wantMeters[i] {
			t.Errorf("meter %d: %+v, want %+v", i, dp.Meters[i], wantMeters[i])
		}
	}
}

// TestRoundTripReferenceFiles checks the guarantees on every note of the real files of
// Debian's openttd-openmsx package, parsed by ingest.Parse.
func TestRoundTripReferenceFiles(t *testing.T) {
	names, pieces := refPieces(t)
	perf := DefaultConfig()
	perf.Drums = DrumsKeep
	grid := gridConfig()
	grid.Drums = DrumsKeep
	pe, ge := mustEncoder(t, perf), mustEncoder(t, grid)
	var onGrid, onGridExact, notes, altered, violations int
	for i := range pieces {
		p := &pieces[i]
		// Performance: every decoded note lies within shift_ms/2 of a note of the same
		// key (onset), velocity in its bin; every piece note is recovered within
		// shift_ms/2 at both ends unless the encoder reported it merged or retriggered.
		s, st, err := pe.Encode(p, Identity, nil)
		if err != nil {
			t.Fatalf("%s: %v", names[i], err)
		}
		dp, err := Decode(ids(s), perf)
		if err != nil {
			t.Fatalf("%s: %v", names[i], err)
		}
		if len(dp.Notes) != st.Encoded {
			t.Errorf("%s: %d notes decoded, %d encoded", names[i], len(dp.Notes), st.Encoded)
		}
		half := float64(perf.ShiftMS)/2/1000 + 1e-9
		want, got := keyed(p.Notes), keyed(dp.Notes)
		for k, gs := range got {
			for _, g := range gs {
				if !anyNote(want[k], func(w ingest.Note) bool {
					return math.Abs(g.Start-w.Start) <= half && pe.vocab.velBin(g.Velocity) == pe.vocab.velBin(w.Velocity)
				}) {
					t.Errorf("%s: decoded note %+v has no piece note within %.1f ms", names[i], g, half*1000)
				}
			}
		}
		missed := 0
		for k, ws := range want {
			for _, w := range ws {
				if !anyNote(got[k], func(g ingest.Note) bool {
					return math.Abs(g.Start-w.Start) <= half && (w.Drum || math.Abs(g.End-w.End) <= half)
				}) {
					missed++
				}
			}
		}
		if missed > st.Merged+st.Retriggered {
			t.Errorf("%s: %d notes not recovered within %.1f ms, only %d merged and %d retriggered",
				names[i], missed, half*1000, st.Merged, st.Retriggered)
		}
		notes += len(p.Notes)
		altered += st.Merged + st.Retriggered
		violations += missed

		// Grid: every on-grid note recovered exactly.
		f, err := ge.Fidelity(p)
		if err != nil {
			t.Fatalf("%s: %v", names[i], err)
		}
		gs, _, err := ge.Encode(p, Identity, nil)
		if err != nil {
			t.Fatal(err)
		}
		gp, err := Decode(ids(gs), grid)
		if err != nil {
			t.Fatalf("%s: grid: %v", names[i], err)
		}
		g := int64(grid.GridPerQuarter)
		tpq := int64(p.TicksPerQuarter)
		k := int64(gp.TicksPerQuarter) / g
		dec := map[[3]int64]int{}
		for _, n := range gp.Notes {
			dec[[3]int64{n.StartTick / k, (n.EndTick - n.StartTick) / k, int64(n.Pitch)}]++
		}
		for _, n := range p.Notes {
			on, end := n.StartTick*g, n.EndTick*g
			steps := (end - on) / tpq
			if on%tpq != 0 || end%tpq != 0 || steps < 1 || steps > int64(grid.MaxDurationSteps) {
				continue
			}
			onGrid++
			key := [3]int64{on / tpq, steps, int64(n.Pitch)}
			if dec[key] == 0 {
				t.Errorf("%s: on-grid note %+v not recovered exactly", names[i], n)
				continue
			}
			dec[key]--
			onGridExact++
		}
		if f.OnGrid != f.OnGridExact {
			t.Errorf("%s: fidelity: %d of %d on-grid notes exact", names[i], f.OnGridExact, f.OnGrid)
		}
	}
	t.Logf("%d pieces, %d notes: performance %d merged or retriggered, %d not within bound; grid %d of %d on-grid notes exact",
		len(pieces), notes, altered, violations, onGridExact, onGrid)
}

func anyNote(ns []ingest.Note, ok func(ingest.Note) bool) bool {
	for _, n := range ns {
		if ok(n) {
			return true
		}
	}
	return false
}

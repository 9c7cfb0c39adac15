package ingest

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// TestTickSorter: tickSorter.order with emitSorted gives the Notes of mergeRuns, whose
// order is the stable sort of the runs by StartTick (TestMergeRunsWide), on random
// runs: many equal ticks, empty runs, many runs, one start tick, notes crowded into
// one bucket (the merge path), ticks of 2^47 and more, and tick ranges too wide to
// pack (order declines, Parse uses mergeRuns). Seconds, programs and the count of
// zero-length notes must agree too.
func TestTickSorter(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	type shape struct {
		name                string
		runs, perRun        int   // most runs and notes per run
		base                int64 // first tick
		step                int   // most ticks between notes of a run
		spike               bool  // one note far later than the rest: the rest share one bucket
		wide                bool  // a tick range too wide to pack with the indexes
		wantPacked, anySize bool
	}
	shapes := []shape{
		{name: "small", runs: 8, perRun: 20, step: 3, wantPacked: true},
		{name: "dense", runs: 16, perRun: 400, step: 4, wantPacked: true},
		{name: "chords", runs: 6, perRun: 600, step: 40, wantPacked: true},
		{name: "one tick", runs: 5, perRun: 50, step: 0, wantPacked: true},
		{name: "many runs", runs: 1500, perRun: 3, step: 500, wantPacked: true},
		{name: "crowded", runs: 12, perRun: 300, step: 1, spike: true, wantPacked: true},
		{name: "late", runs: 10, perRun: 200, base: 1<<47 + 5, step: 50, wantPacked: true},
		{name: "late crowded", runs: 10, perRun: 200, base: 1 << 50, step: 1, spike: true, wantPacked: true},
		{name: "wide", runs: 4, perRun: 100, step: 7, wide: true},
	}
	var tm TimeMap
	tm.build(&Piece{TicksPerQuarter: 96, Tempos: []Tempo{{0, 400000}, {50, 600000}, {300, 250000}, {2000, 500000}, {1 << 48, 700000}}})
	var s tickSorter // reused across cases, as Parse does
	for _, sh := range shapes {
		for iter := range 40 {
			var src []rawNote
			bounds := []int{0}
			for tr := range 1 + rng.IntN(sh.runs) {
				tick := sh.base
				for range rng.IntN(sh.perRun + 1) {
					if sh.step > 0 {
						tick += int64(rng.IntN(sh.step + 1))
					}
					end := tick + int64(rng.IntN(3))*int64(rng.IntN(100))
					src = append(src, rawNote{StartTick: tick, EndTick: end, Track: int32(tr),
						Pitch: uint8(rng.IntN(128)), Velocity: uint8(1 + rng.IntN(127)), Channel: uint8(rng.IntN(16))})
				}
				if sh.spike && tr == 0 && len(src) > 0 {
					src[len(src)-1].StartTick = sh.base + 1<<30
					src[len(src)-1].EndTick = sh.base + 1<<30
				}
				if sh.wide && tr == 0 {
					src = append(src, rawNote{StartTick: 1 << 62, EndTick: 1 << 62, Track: int32(tr)})
				}
				bounds = append(bounds, len(src))
				if rng.IntN(4) == 0 {
					bounds = append(bounds, len(src)) // an empty run
				}
			}
			var progs []progChange
			for range rng.IntN(6) {
				progs = append(progs, progChange{tick: sh.base + int64(rng.IntN(400)), channel: uint8(rng.IntN(16)), program: uint8(rng.IntN(128))})
			}
			slices.SortStableFunc(progs, func(a, b progChange) int { return int(min(max(a.tick-b.tick, -1), 1)) })

			want := make([]Note, len(src))
			emWant := emitter{tm: &tm, progs: progs}
			mergeRuns(want, src, bounds, &emWant)

			keys, ends, idxBits, ok := s.order(src, bounds)
			if !ok {
				if sh.wantPacked && len(src) > 0 {
					t.Fatalf("%s, iteration %d: order declined %d notes", sh.name, iter, len(src))
				}
				continue
			}
			if sh.wide && len(src) > 1 {
				t.Fatalf("%s, iteration %d: order accepted a tick range of 2^62 over %d notes", sh.name, iter, len(src))
			}
			got := make([]Note, len(src))
			emGot := emitter{tm: &tm, progs: progs}
			emitSorted(got, src, keys, ends, idxBits, &emGot)
			for i := range got {
				if got[i] != want[i] {
					t.Fatalf("%s, iteration %d (%d notes, %d runs): note %d is %+v, want %+v", sh.name, iter, len(src), len(bounds)-1, i, got[i], want[i])
				}
			}
			if emGot.zero != emWant.zero {
				t.Fatalf("%s, iteration %d: %d zero-length notes, want %d", sh.name, iter, emGot.zero, emWant.zero)
			}
		}
	}
}

// TestMergeKeys: mergeKeys equals sorting the concatenation, empty sides included.
func TestMergeKeys(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	for range 500 {
		a := make([]uint64, rng.IntN(20))
		b := make([]uint64, rng.IntN(20))
		for i := range a {
			a[i] = rng.Uint64N(50)
		}
		for i := range b {
			b[i] = rng.Uint64N(50)
		}
		slices.Sort(a)
		slices.Sort(b)
		want := slices.Sorted(slices.Values(slices.Concat(a, b)))
		got := make([]uint64, len(a)+len(b))
		mergeKeys(got, a, b)
		if !slices.Equal(got, want) {
			t.Fatalf("mergeKeys(%v, %v) = %v, want %v", a, b, got, want)
		}
	}
}

package ingest

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// TestMergeRuns checks the heap merge against a plain stable sort of the
// concatenated runs, on random runs with many equal ticks (common practice for a
// k-way merge: the result must equal the stable sort by key).
func TestMergeRuns(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for iter := range 300 {
		k := 1 + rng.IntN(40)
		var src []rawNote
		bounds := []int{0}
		for tr := range k {
			n := rng.IntN(30)
			if rng.IntN(4) == 0 {
				n = 0
			}
			tick := int64(0)
			for range n {
				tick += int64(rng.IntN(3))
				src = append(src, rawNote{StartTick: tick, EndTick: tick + int64(rng.IntN(5)), Track: int32(tr), Pitch: uint8(rng.IntN(4)), Channel: uint8(rng.IntN(2)), Velocity: uint8(1 + rng.IntN(3))})
			}
			bounds = append(bounds, len(src))
		}
		for i := 0; i+1 < len(bounds); i++ {
			sortRun(src[bounds[i]:bounds[i+1]])
		}
		want := slices.Clone(src)
		slices.SortStableFunc(want, func(a, b rawNote) int {
			switch {
			case noteLess(&a, &b):
				return -1
			case noteLess(&b, &a):
				return 1
			}
			return 0
		})
		var tm TimeMap
		tm.build(&Piece{TicksPerQuarter: 96})
		em := emitter{tm: &tm}
		got := make([]Note, len(src))
		mergeRuns(got, src, bounds, &em)
		gotRaw := make([]rawNote, len(got))
		for i, n := range got {
			gotRaw[i] = rawNote{StartTick: n.StartTick, EndTick: n.EndTick, Track: int32(n.Track), Pitch: n.Pitch, Channel: n.Channel, Velocity: n.Velocity}
		}
		if !slices.Equal(gotRaw, want) {
			t.Fatalf("iteration %d (%d runs): merge differs from the stable sort\n got %v\nwant %v", iter, k, gotRaw, want)
		}
	}
}

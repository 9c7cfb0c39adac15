package ingest

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// TestMergeRunsWide: the packed-key merge and the merge for any tick agree, and both
// equal a stable sort by (StartTick, run), on random runs with many equal ticks, some
// of them at ticks too large to pack (common practice for a k-way merge: the result
// must equal the stable sort by key).
func TestMergeRunsWide(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	var tm TimeMap
	tm.build(&Piece{TicksPerQuarter: 96})
	for iter := range 300 {
		var src []rawNote
		bounds := []int{0}
		for tr := range 1 + rng.IntN(70) {
			tick := int64(0)
			if iter%3 == 0 {
				tick = 1<<47 - int64(rng.IntN(20)) // some runs cross the packing limit
			}
			for range rng.IntN(25) {
				tick += int64(rng.IntN(3))
				src = append(src, rawNote{StartTick: tick, EndTick: tick + 1, Track: int32(tr), Pitch: uint8(rng.IntN(128))})
			}
			bounds = append(bounds, len(src))
		}
		want := slices.Clone(src)
		slices.SortStableFunc(want, func(a, b rawNote) int {
			switch {
			case a.StartTick < b.StartTick:
				return -1
			case a.StartTick > b.StartTick:
				return 1
			}
			return 0
		})
		for _, merge := range []struct {
			name string
			f    func([]Note, []rawNote, []int, *emitter)
		}{{"mergeRuns", mergeRuns}, {"mergeRunsWide", mergeRunsWide}} {
			got := make([]Note, len(src))
			merge.f(got, src, bounds, &emitter{tm: &tm})
			for i := range got {
				if got[i].StartTick != want[i].StartTick || got[i].Track != int(want[i].Track) || got[i].Pitch != want[i].Pitch {
					t.Fatalf("iteration %d (%d runs), %s: note %d is %+v, want %+v", iter, len(bounds)-1, merge.name, i, got[i], want[i])
				}
			}
		}
	}
}

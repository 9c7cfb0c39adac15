package audit

import (
	"math/rand/v2"
	"reflect"
	"testing"

	"github.com/relshard/relshard/relpos"
	"github.com/relshard/relshard/tokenize"
)

// randomWindow builds a window like an encoder's: non-decreasing times with runs of
// equal times, pitched and unpitched tokens, some drums.
func randomWindow(r *rand.Rand, n int, sorted bool) []tokenize.Token {
	toks := make([]tokenize.Token, n)
	var t int32
	for i := range toks {
		if r.IntN(3) == 0 {
			t += int32(r.IntN(400))
		}
		tok := tokenize.Token{Time: t, MS: t, Pitch: -1, Inst: -1}
		if r.IntN(2) == 0 {
			tok.Pitch = int16(r.IntN(128))
			tok.Inst = int16(r.IntN(8))
			if r.IntN(10) == 0 {
				tok.Inst = tokenize.InstDrums
			}
		}
		toks[i] = tok
	}
	if !sorted {
		r.Shuffle(len(toks), func(i, j int) { toks[i].Time, toks[j].Time = toks[j].Time, toks[i].Time })
	}
	return toks
}

// The grouped count equals the pair-by-pair reference on random windows.
func TestPairCounterMatchesNaive(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	var pc pairCounter
	// Short Δt ranges, so that the upper tail is exercised too; exact counters
	// throughout, and exact counters below 64 with 64 per octave above.
	exactT, exactS := newHist(0, 20_000), newHist(0, 20_000)
	wideT, wideS := newWideHist(0, 20_000, 64), newWideHist(0, 20_000, 64)
	fastP, slowP := newHist(-maxPairDP, maxPairDP), newHist(-maxPairDP, maxPairDP)
	for trial := range 300 {
		n := r.IntN(300)
		toks := randomWindow(r, n, trial%10 != 0)
		fastT, slowT := exactT, exactS
		if trial%2 == 1 {
			fastT, slowT = wideT, wideS
		}
		for _, h := range []*Hist{fastT, fastP, slowT, slowP} {
			resetHist(h)
		}
		pc.window(toks, fastT, fastP)
		pc.window(toks[:0], fastT, fastP) // an empty window adds nothing
		naivePairs(toks, slowT, slowP)
		if !reflect.DeepEqual(fastT, slowT) {
			t.Fatalf("trial %d (%d tokens): Δt counts differ:\nfast %+v\nslow %+v", trial, n, summary(fastT), summary(slowT))
		}
		if !reflect.DeepEqual(fastP, slowP) {
			t.Fatalf("trial %d (%d tokens): Δp counts differ:\nfast %+v\nslow %+v", trial, n, summary(fastP), summary(slowP))
		}
	}
}

func TestPairCounterWorkedExample(t *testing.T) {
	// Three tokens: C4 at 0 ms, E4 at 0 ms, G4 at 500 ms. Pairs (earlier, later):
	// (C, E) Δt 0, Δp key − query = 60 − 64 = −4; (C, G) Δt 500, Δp −7; (E, G) Δt 500, Δp −3.
	toks := []tokenize.Token{
		{Time: 0, Pitch: 60, Inst: 0}, {Time: 0, Pitch: 64, Inst: 0}, {Time: 500, Pitch: 67, Inst: 0},
	}
	dt, dp := newDTHist(), newHist(-maxPairDP, maxPairDP)
	var pc pairCounter
	pc.window(toks, dt, dp)
	if dt.N != 3 || dt.Counts[0] != 1 || dt.Counts[500] != 2 {
		t.Errorf("Δt: %+v", summary(dt))
	}
	if dp.N != 3 || dp.Counts[-4+127] != 1 || dp.Counts[-7+127] != 1 || dp.Counts[-3+127] != 1 {
		t.Errorf("Δp: %+v", summary(dp))
	}
}

// summary lists the non-zero counters of h, for messages.
func summary(h *Hist) map[int64]int64 {
	m := map[int64]int64{}
	for i, c := range h.Counts {
		if c != 0 {
			m[h.Lo+int64(i)] = c
		}
	}
	m[-1<<40] = h.Under
	m[1<<40] = h.Over
	return m
}

func BenchmarkPairCounter(b *testing.B) {
	r := rand.New(rand.NewPCG(3, 4))
	toks := randomWindow(r, 2048, true)
	dt, dp := newDTHist(), newHist(-maxPairDP, maxPairDP)
	b.Run("grouped", func(b *testing.B) {
		b.ReportAllocs()
		var pc pairCounter
		for b.Loop() {
			pc.window(toks, dt, dp)
		}
	})
	b.Run("naive", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			naivePairs(toks, dt, dp)
		}
	})
}

func BenchmarkDetectGrid(b *testing.B) {
	r := rand.New(rand.NewPCG(5, 6))
	onsets := make([]int64, 4000)
	for i := range onsets {
		onsets[i] = int64(i*120 + r.IntN(3))
	}
	cfg := DefaultGridConfig()
	b.ReportAllocs()
	for b.Loop() {
		DetectGrid(onsets, 480, cfg)
	}
}

func TestSchemeEdges(t *testing.T) {
	// Linear clipping of Shaw et al. 2018 with width 10 and clip 3: bucket =
	// clip(trunc(Δ/10), −3, 3), so offsets −9..9 share bucket 0 (trunc toward zero),
	// −19..−10 the next, and from −40 on offsets saturate.
	s, err := relpos.Linear(10, 3)
	if err != nil {
		t.Fatal(err)
	}
	got := timeScheme(s)
	want := Scheme{Name: s.Name, Kind: "time", Edges: []float64{9.5, 19.5, 29.5, 39.5}, Clip: []float64{39.5}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("timeScheme = %+v, want %+v", got, want)
	}
	p, err := relpos.Linear(1, 2)
	if err != nil {
		t.Fatal(err)
	}
	gotP := pitchScheme(p)
	wantP := Scheme{Name: p.Name, Kind: "pitch", Edges: []float64{-2.5, -1.5, -0.5, 0.5, 1.5, 2.5}, Clip: []float64{-2.5, 2.5}}
	if !reflect.DeepEqual(gotP, wantP) {
		t.Errorf("pitchScheme = %+v, want %+v", gotP, wantP)
	}
}

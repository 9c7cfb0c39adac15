package tokenize

import (
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/relshard/relshard/ingest"
)

func TestEncodeGrid(t *testing.T) {
	keep := func(c *Config) { c.Drums = DrumsKeep }
	head := "begin@0 bar@0 meter.4/4@0 tempo.19@0 " // 120 BPM falls in bin 19 of 32 log-spaced bins 40..250
	tests := []struct {
		name    string
		cfg     func(*Config)
		variant Variant
		meters  []ingest.Meter
		tempos  []ingest.Tempo
		notes   []string
		want    string
		stats   Stats // Notes and Tokens are filled in by the test
	}{
		{
			name:  "two notes in one bar",
			notes: []string{"0:480:60:96", "480:240:64:96"},
			// 480 ticks per quarter at 12 steps per quarter: 40 ticks a step.
			want:  head + "pos.0@0 inst.piano@0 pitch.60@0 dur.12@0 vel.24@0 pos.12@12 pitch.64@12 dur.6@12 vel.24@12 end@12",
			stats: Stats{Encoded: 2},
		},
		{
			name:  "empty bar between notes",
			notes: []string{"0:480:60", "3840:480:62"},
			want:  head + "pos.0@0 inst.piano@0 pitch.60@0 dur.12@0 vel.20@0 bar@48 bar@96 pos.0@96 pitch.62@96 dur.12@96 vel.20@96 end@96",
			stats: Stats{Encoded: 2},
		},
		{
			name:   "meter change at a bar line",
			meters: []ingest.Meter{{Tick: 0, Num: 3, Denom: 4}, {Tick: 1440, Num: 4, Denom: 4}},
			notes:  []string{"1440:480:60"},
			want:   "begin@0 bar@0 meter.3/4@0 tempo.19@0 bar@36 meter.4/4@36 pos.0@36 inst.piano@36 pitch.60@36 dur.12@36 vel.20@36 end@36",
			stats:  Stats{Encoded: 1},
		},
		{
			name:   "meter change inside a bar moves to the next bar line",
			meters: []ingest.Meter{{Tick: 0, Num: 4, Denom: 4}, {Tick: 960, Num: 3, Denom: 4}},
			notes:  []string{"1920:480:60", "3360:480:62"},
			want: head + "bar@48 meter.3/4@48 pos.0@48 inst.piano@48 pitch.60@48 dur.12@48 vel.20@48 " +
				"bar@84 pos.0@84 pitch.62@84 dur.12@84 vel.20@84 end@84",
			stats: Stats{Encoded: 2, MetersMoved: 1},
		},
		{
			name:   "meter without a token falls back to 4/4",
			meters: []ingest.Meter{{Tick: 0, Num: 7, Denom: 1}},
			notes:  []string{"0:480:60"},
			want:   head + "pos.0@0 inst.piano@0 pitch.60@0 dur.12@0 vel.20@0 end@0",
			stats:  Stats{Encoded: 1, MetersUnsupported: 1},
		},
		{
			name:   "tempo restated at the bar where it changed",
			tempos: []ingest.Tempo{{Tick: 0, USPerQuarter: 500000}, {Tick: 1920, USPerQuarter: 1000000}},
			notes:  []string{"1920:480:60"},
			want:   head + "bar@48 tempo.7@48 pos.0@48 inst.piano@48 pitch.60@48 dur.12@48 vel.20@48 end@48",
			stats:  Stats{Encoded: 1},
		},
		{
			name:  "instrument families and drums",
			cfg:   keep,
			notes: []string{"p33/0:480:40", "d0:120:36", "p0/0:480:60"},
			want: head + "pos.0@0 inst.piano@0 pitch.60@0 dur.12@0 vel.20@0 inst.bass@0 pitch.40@0 dur.12@0 vel.20@0 " +
				"inst.drums@0 pitch.36@0 dur.3@0 vel.20@0 end@0",
			stats: Stats{Encoded: 3},
		},
		{
			name:  "drums dropped by default",
			notes: []string{"d0:120:36", "0:480:60"},
			want:  head + "pos.0@0 inst.piano@0 pitch.60@0 dur.12@0 vel.20@0 end@0",
			stats: Stats{Encoded: 1, DrumsDropped: 1},
		},
		{
			name:  "durations clipped and lengthened",
			notes: []string{"0:5000:60", "0:10:62"},
			want:  head + "pos.0@0 inst.piano@0 pitch.60@0 dur.96@0 vel.20@0 pitch.62@0 dur.1@0 vel.20@0 end@0",
			stats: Stats{Encoded: 2, Clipped: 1, Lengthened: 1},
		},
		{
			name:  "off-grid onset rounds to the nearest step",
			notes: []string{"20:460:60"}, // half a step rounds up
			want:  head + "pos.1@1 inst.piano@1 pitch.60@1 dur.11@1 vel.20@1 end@1",
			stats: Stats{Encoded: 1},
		},
		{
			name:    "transposition",
			cfg:     keep,
			variant: Variant{Transpose: -3, Stretch: 1},
			notes:   []string{"0:480:60", "0:480:1", "d0:120:36"},
			want:    head + "pos.0@0 inst.piano@0 pitch.57@0 dur.12@0 vel.20@0 inst.drums@0 pitch.36@0 dur.3@0 vel.20@0 end@0",
			stats:   Stats{Encoded: 2, OutOfRange: 1},
		},
		{
			name: "empty piece",
			want: "begin@0 end@0",
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			cfg := gridConfig()
			if tc.cfg != nil {
				tc.cfg(&cfg)
			}
			e := mustEncoder(t, cfg)
			p := piece(t, tc.notes...)
			p.Meters, p.Tempos = tc.meters, tc.tempos
			v := tc.variant
			if v == (Variant{}) {
				v = Identity
			}
			s, st, err := e.Encode(p, v, nil)
			if err != nil {
				t.Fatal(err)
			}
			if got := labels(e.Vocab(), s); got != tc.want {
				t.Errorf("stream\n got %s\nwant %s", got, tc.want)
			}
			want := tc.stats
			want.Notes, want.Tokens = len(tc.notes), len(strings.Fields(tc.want))
			if st != want {
				t.Errorf("stats\n got %+v\nwant %+v", st, want)
			}
		})
	}
}

// TestGridTokenMS checks the milliseconds grid tokens carry through the tempo map.
func TestGridTokenMS(t *testing.T) {
	e := mustEncoder(t, gridConfig())
	p := piece(t, "1920:480:60", "2400:480:62")
	// 120 BPM for two bars of 4/4 (4 s), then 60 BPM: a quarter lasts 1 s.
	p.Tempos = []ingest.Tempo{{Tick: 0, USPerQuarter: 500000}, {Tick: 1920, USPerQuarter: 1000000}}
	s, _, err := e.Encode(p, Identity, nil)
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, tk := range s {
		got = append(got, e.Vocab().Label(tk.ID)+"@"+itoa(int(tk.MS))+"ms")
	}
	want := "begin@0ms bar@0ms meter.4/4@0ms tempo.19@0ms bar@2000ms tempo.7@2000ms pos.0@2000ms inst.piano@2000ms " +
		"pitch.60@2000ms dur.12@2000ms vel.20@2000ms pos.12@3000ms pitch.62@3000ms dur.12@3000ms vel.20@3000ms end@3000ms"
	if g := strings.Join(got, " "); g != want {
		t.Errorf("got  %s\nwant %s", g, want)
	}
}

// TestTickSteps checks the reciprocal division of tickSteps against the plain
// rounding division, at the ends of the tick range and on random ticks, for the
// divisions and grid resolutions a file can have.
func TestTickSteps(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	for range 2000 {
		tpq := uint64(1 + rng.IntN(1<<15))
		if rng.IntN(4) == 0 {
			tpq = uint64([]int{1, 2, 3, 24, 96, 480, 960, 32767, 1 << 15}[rng.IntN(9)])
		}
		g := uint64(1 + rng.IntN(96))
		ts := newTickSteps(g, tpq)
		for k := range 200 {
			tick := rng.Int64N(maxTick + 1)
			switch k {
			case 0:
				tick = 0
			case 1:
				tick = maxTick
			case 2:
				tick = int64(tpq) // one quarter
			}
			want := (tick*int64(g)*2 + int64(tpq)) / (2 * int64(tpq))
			if got := ts.step(tick); got != want {
				t.Fatalf("tpq %d, grid %d, tick %d: step %d, want %d", tpq, g, tick, got, want)
			}
		}
	}
}

package tokenize

import (
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

func TestEncodePerformance(t *testing.T) {
	keep := func(c *Config) { c.Drums = DrumsKeep }
	tests := []struct {
		name    string
		cfg     func(*Config)
		variant Variant
		notes   []string
		want    string
		stats   Stats // Notes and Tokens are filled in by the test
	}{
		{
			name:  "two notes",
			notes: []string{"0:480:60:96", "480:240:64:96"},
			// 96 * 32 / 128 = bin 24; a quarter at 120 BPM is 500 ms (SMF 1.0 default tempo).
			want:  "begin@0 vel.24@0 on.60@0 dt.500@500 off.60@500 on.64@500 dt.250@750 off.64@750 end@750",
			stats: Stats{Encoded: 2},
		},
		{
			name:  "gap longer than the longest shift",
			notes: []string{"0:96:60", "2880:96:62"},
			want:  "begin@0 vel.20@0 on.60@0 dt.100@100 off.60@100 dt.1000@1100 dt.1000@2100 dt.900@3000 on.62@3000 dt.100@3100 off.62@3100 end@3100",
			stats: Stats{Encoded: 2},
		},
		{
			name:  "rounding to the nearest step",
			notes: []string{"5:100:60"}, // 5.2 ms -> 10 ms, 109.4 ms -> 110 ms
			want:  "begin@0 dt.10@10 vel.20@10 on.60@10 dt.100@110 off.60@110 end@110",
			stats: Stats{Encoded: 1},
		},
		{
			name:  "chord with two velocities",
			notes: []string{"0:480:60:100", "0:480:64:40"},
			want:  "begin@0 vel.25@0 on.60@0 vel.10@0 on.64@0 dt.500@500 off.60@500 off.64@500 end@500",
			stats: Stats{Encoded: 2},
		},
		{
			name:  "same key overlap retriggers",
			notes: []string{"0:960:60", "480:480:60"},
			want:  "begin@0 vel.20@0 on.60@0 dt.500@500 off.60@500 on.60@500 dt.500@1000 off.60@1000 end@1000",
			stats: Stats{Encoded: 2, Retriggered: 1},
		},
		{
			name:  "same key same onset keeps the longest",
			notes: []string{"0:480:60:80", "0:960:60:100"},
			want:  "begin@0 vel.25@0 on.60@0 dt.1000@1000 off.60@1000 end@1000",
			stats: Stats{Encoded: 1, Merged: 1},
		},
		{
			name:  "zero-length note: its off follows its on",
			notes: []string{"0:0:60", "0:480:62"},
			want:  "begin@0 vel.20@0 on.60@0 on.62@0 off.60@0 dt.500@500 off.62@500 end@500",
			stats: Stats{Encoded: 2},
		},
		{
			name:  "drums dropped by default",
			notes: []string{"d0:96:36", "0:480:60"},
			want:  "begin@0 vel.20@0 on.60@0 dt.500@500 off.60@500 end@500",
			stats: Stats{Encoded: 1, DrumsDropped: 1},
		},
		{
			name:  "drums kept as hits",
			cfg:   keep,
			notes: []string{"d0:96:36", "0:480:60"},
			want:  "begin@0 vel.20@0 hit.36@0 on.60@0 dt.500@500 off.60@500 end@500",
			stats: Stats{Encoded: 2},
		},
		{
			name:    "transposition leaves drums and drops notes out of range",
			cfg:     keep,
			variant: Variant{Transpose: 12, Stretch: 1},
			notes:   []string{"d0:96:36", "0:480:60", "0:480:120"},
			want:    "begin@0 vel.20@0 hit.36@0 on.72@0 dt.500@500 off.72@500 end@500",
			stats:   Stats{Encoded: 2, OutOfRange: 1},
		},
		{
			name:    "stretch slows down",
			variant: Variant{Transpose: 0, Stretch: 2},
			notes:   []string{"0:480:60", "480:480:62"},
			want:    "begin@0 vel.20@0 on.60@0 dt.1000@1000 off.60@1000 on.62@1000 dt.1000@2000 off.62@2000 end@2000",
			stats:   Stats{Encoded: 2},
		},
		{
			name:  "empty piece",
			want:  "begin@0 end@0",
			stats: Stats{},
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			cfg := DefaultConfig()
			if tc.cfg != nil {
				tc.cfg(&cfg)
			}
			e := mustEncoder(t, cfg)
			v := tc.variant
			if v == (Variant{}) {
				v = Identity
			}
			s, st, err := e.Encode(piece(t, tc.notes...), v, nil)
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
			for _, tk := range s {
				if tk.MS != tk.Time {
					t.Errorf("token %s: MS %d != Time %d in the performance encoding", e.Vocab().Label(tk.ID), tk.MS, tk.Time)
				}
			}
		})
	}
}

// TestPerformanceTokenFields checks the pitch and instrument each token carries.
func TestPerformanceTokenFields(t *testing.T) {
	cfg := DefaultConfig()
	cfg.Drums = DrumsKeep
	e := mustEncoder(t, cfg)
	s, _, err := e.Encode(piece(t, "d0:96:36", "p33/0:480:40"), Identity, nil)
	if err != nil {
		t.Fatal(err)
	}
	type fields struct {
		label       string
		pitch, inst int16
	}
	var got []fields
	for _, tk := range s {
		got = append(got, fields{e.Vocab().Label(tk.ID), tk.Pitch, tk.Inst})
	}
	want := []fields{{"begin", -1, -1}, {"vel.20", -1, -1}, {"hit.36", 36, InstDrums}, {"on.40", 40, 33},
		{"dt.500", -1, -1}, {"off.40", 40, 33}, {"end", -1, -1}}
	if len(got) != len(want) {
		t.Fatalf("got %v, want %v", got, want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("token %d: got %+v, want %+v", i, got[i], want[i])
		}
	}
}

// TestEncodeOrderIndependent checks that notes out of onset order (hand-made pieces)
// encode as the same notes sorted the way ingest sorts them.
func TestEncodeOrderIndependent(t *testing.T) {
	for _, enc := range []string{Performance, Grid} {
		cfg := DefaultConfig()
		cfg.Encoding = enc
		cfg.Drums = DrumsKeep
		e := mustEncoder(t, cfg)
		sorted := randomPiece(11, 1500, true)
		sortNotes(sorted.Notes)
		// Retriggers and merges too: overlapping and doubled notes of one key.
		extra := piece(t, "0:960:60", "480:480:60", "480:960:60:30", "d480:10:36", "d480:20:36:99")
		sorted.Notes = append(extra.Notes, sorted.Notes...)
		sortNotes(sorted.Notes)
		shuffled := *sorted
		shuffled.Notes = slices.Clone(sorted.Notes)
		rand.New(rand.NewPCG(1, 2)).Shuffle(len(shuffled.Notes), func(i, j int) {
			shuffled.Notes[i], shuffled.Notes[j] = shuffled.Notes[j], shuffled.Notes[i]
		})
		a, sa, err := e.Encode(sorted, Identity, nil)
		if err != nil {
			t.Fatal(err)
		}
		b, sb, err := e.Encode(&shuffled, Identity, nil)
		if err != nil {
			t.Fatal(err)
		}
		if sa != sb || !slices.Equal(ids(a), ids(b)) {
			t.Errorf("%s: sorted and shuffled notes encode differently: %+v vs %+v", enc, sa, sb)
		}
		if enc == Performance && (sa.Merged == 0 || sa.Retriggered == 0) {
			t.Errorf("stats %+v: the test piece should merge and retrigger", sa)
		}
	}
}

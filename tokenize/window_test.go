package tokenize

import (
	"errors"
	"slices"
	"testing"

	"github.com/relshard/relshard/ingest"
)

// windowPieces are the pieces the window tests cut: the reference files when
// present, else hand-made ones.
func windowPieces(t *testing.T) []ingest.Piece {
	ps := []ingest.Piece{*randomPiece(3, 400, true)}
	sortNotes(ps[0].Notes)
	if files, _ := refGlob(); len(files) > 0 {
		_, ref := refPieces(t)
		ps = append(ps, ref[:4]...)
	}
	return ps
}

func TestWindows(t *testing.T) {
	for _, enc := range []string{Performance, Grid} {
		for _, stride := range []int{0, 40} {
			cfg := DefaultConfig()
			cfg.Encoding = enc
			cfg.Drums = DrumsKeep
			cfg.MaxLen, cfg.Stride, cfg.MinLen = 64, stride, 0
			e := mustEncoder(t, cfg)
			d, err := NewDecoder(cfg)
			if err != nil {
				t.Fatal(err)
			}
			for pi, p := range windowPieces(t) {
				stream, _, err := e.Encode(&p, Identity, nil)
				if err != nil {
					t.Fatal(err)
				}
				var joined []Token
				next, prevStart := 0, -1
				err = e.WindowsOf(stream, Identity, func(w Window) error {
					if len(w.Tokens) > cfg.MaxLen {
						t.Fatalf("%s piece %d window %d: %d tokens, max_len %d", enc, pi, w.Index, len(w.Tokens), cfg.MaxLen)
					}
					body := w.Tokens[w.Prefix:]
					if !slices.Equal(body, stream[w.Start:w.Start+len(body)]) {
						t.Fatalf("%s piece %d window %d: tokens after the prefix are not the stream at %d", enc, pi, w.Index, w.Start)
					}
					if w.Start <= prevStart || w.Start > next {
						t.Fatalf("%s piece %d window %d: starts at %d after a window at %d ending at %d", enc, pi, w.Index, w.Start, prevStart, next)
					}
					if stride == 0 && w.Start != next {
						t.Fatalf("%s piece %d window %d: starts at %d, want %d (no overlap at stride max_len)", enc, pi, w.Index, w.Start, next)
					}
					if stride == 0 {
						joined = append(joined, body...)
					}
					prevStart, next = w.Start, w.Start+len(body)
					for i := 1; i < len(w.Tokens); i++ {
						if w.Tokens[i].Time < w.Tokens[i-1].Time || w.Tokens[i].MS < w.Tokens[i-1].MS {
							t.Fatalf("%s piece %d window %d: time decreases at token %d", enc, pi, w.Index, i)
						}
					}
					if _, err := d.Decode(ids(w.Tokens)); err != nil {
						t.Fatalf("%s piece %d window %d does not decode on its own: %v\n%s", enc, pi, w.Index, err, labels(e.Vocab(), w.Tokens))
					}
					return nil
				})
				if err != nil {
					t.Fatal(err)
				}
				if next != len(stream) {
					t.Errorf("%s piece %d: windows end at %d of %d tokens", enc, pi, next, len(stream))
				}
				if stride == 0 && !slices.Equal(joined, stream) {
					t.Errorf("%s piece %d: windows joined differ from the stream", enc, pi)
				}
			}
		}
	}
}

// TestWindowState checks the restated state and what happens to a note cut by a
// window boundary.
func TestWindowState(t *testing.T) {
	cfg := DefaultConfig()
	cfg.MaxLen, cfg.MinLen = 16, 0
	e := mustEncoder(t, cfg)
	// Six notes of 100 ms, each velocity different; a long note over the cut.
	p := piece(t, "0:4800:40:100", "0:96:60:10", "96:96:61:20", "192:96:62:30", "288:96:63:40", "384:96:64:50", "480:96:65:60")
	var got []string
	err := e.Windows(p, func(w Window) error {
		got = append(got, labels(e.Vocab(), w.Tokens))
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	want := []string{
		"begin@0 vel.25@0 on.40@0 vel.2@0 on.60@0 dt.100@100 off.60@100 vel.5@100 on.61@100 dt.100@200 off.61@200 vel.7@200 on.62@200 dt.100@300 off.62@300 vel.10@300",
		"vel.10@300 on.63@300 dt.100@400 off.63@400 vel.12@400 on.64@400 dt.100@500 off.64@500 vel.15@500 on.65@500 dt.100@600 off.65@600 dt.1000@1600 dt.1000@2600 dt.1000@3600 dt.1000@4600",
		"vel.15@4600 dt.400@5000 off.40@5000 end@5000",
	}
	if !slices.Equal(got, want) {
		t.Fatalf("windows\n got %q\nwant %q", got, want)
	}
	// Decoded alone, the first window ends the long note at its last time; the last
	// window ignores the unmatched note-off.
	w0, err := Decode(mustIDs(e, want[0]), cfg)
	if err != nil {
		t.Fatal(err)
	}
	if n := w0.Notes[0]; n.Pitch != 40 || n.EndTick != 300 || w0.Warnings[ingest.WarnOpenAtEnd] != 1 {
		t.Errorf("first window: note %+v, warnings %v", n, w0.Warnings)
	}
	w2, err := Decode(mustIDs(e, want[2]), cfg)
	if err != nil {
		t.Fatal(err)
	}
	if len(w2.Notes) != 0 || w2.Warnings[ingest.WarnOrphanOff] != 1 {
		t.Errorf("last window: notes %+v, warnings %v", w2.Notes, w2.Warnings)
	}
}

func TestWindowsMinLenAndErrors(t *testing.T) {
	cfg := DefaultConfig()
	cfg.MaxLen, cfg.MinLen = 16, 8
	e := mustEncoder(t, cfg)
	p := piece(t, "0:96:60", "96:96:61", "192:96:62", "288:96:63", "384:96:64")
	var n []int
	if err := e.Windows(p, func(w Window) error { n = append(n, len(w.Tokens)); return nil }); err != nil {
		t.Fatal(err)
	}
	// The stream has 16 + 2 tokens: one full window; the tail of 3 (off.64, end and
	// the restated velocity) is under min_len and dropped.
	if !slices.Equal(n, []int{16}) {
		t.Errorf("window lengths %v, want [16]", n)
	}
	stop := errors.New("stop")
	if err := e.Windows(p, func(Window) error { return stop }); !errors.Is(err, stop) {
		t.Errorf("yield error: got %v", err)
	}
}

func TestVariants(t *testing.T) {
	cfg := DefaultConfig()
	cfg.Transpose = []int{-2, 0, 3}
	cfg.Stretch = []float64{0.9, 1}
	got := mustEncoder(t, cfg).Variants()
	want := []Variant{{0, 1}, {-2, 0.9}, {-2, 1}, {0, 0.9}, {3, 0.9}, {3, 1}}
	if !slices.Equal(got, want) {
		t.Errorf("variants %v, want %v", got, want)
	}
	var labels []string
	for _, v := range got {
		labels = append(labels, v.String())
	}
	if w := []string{"t0 s1", "t-2 s0.9", "t-2 s1", "t0 s0.9", "t+3 s0.9", "t+3 s1"}; !slices.Equal(labels, w) {
		t.Errorf("labels %q, want %q", labels, w)
	}
	// Windows walks the variants in this order.
	cfg.MinLen = 0
	e := mustEncoder(t, cfg)
	var seen []Variant
	err := e.Windows(piece(t, "0:480:60"), func(w Window) error {
		if w.Index == 0 {
			seen = append(seen, w.Variant)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(seen, want) {
		t.Errorf("windows walked variants %v, want %v", seen, want)
	}
}

func mustIDs(e *Encoder, s string) []int32 {
	var out []int32
	for _, f := range splitFields(s) {
		id, ok := e.Vocab().Lookup(f)
		if !ok {
			panic("no token " + f)
		}
		out = append(out, id)
	}
	return out
}

// TestWindowsInPlace checks that Windows, which writes prefixes into its own stream
// instead of copying, yields exactly what WindowsOf yields from a copy of the stream.
func TestWindowsInPlace(t *testing.T) {
	for _, enc := range []string{Performance, Grid} {
		for _, stride := range []int{0, 50} {
			cfg := DefaultConfig()
			cfg.Encoding = enc
			cfg.Drums = DrumsKeep
			cfg.MaxLen, cfg.Stride, cfg.MinLen = 64, stride, 0
			cfg.Transpose = []int{0, 3}
			e := mustEncoder(t, cfg)
			for pi, p := range windowPieces(t) {
				var want [][]Token
				var wantMeta [][3]int
				for _, v := range e.Variants() {
					stream, _, err := e.Encode(&p, v, nil)
					if err != nil {
						t.Fatal(err)
					}
					err = e.WindowsOf(stream, v, func(w Window) error {
						want = append(want, slices.Clone(w.Tokens))
						wantMeta = append(wantMeta, [3]int{w.Index, w.Start, w.Prefix})
						return nil
					})
					if err != nil {
						t.Fatal(err)
					}
				}
				i := 0
				err := e.Windows(&p, func(w Window) error {
					if i >= len(want) || !slices.Equal(w.Tokens, want[i]) || [3]int{w.Index, w.Start, w.Prefix} != wantMeta[i] {
						t.Fatalf("%s stride %d piece %d: window %d differs from WindowsOf", enc, stride, pi, i)
					}
					i++
					return nil
				})
				if err != nil {
					t.Fatal(err)
				}
				if i != len(want) {
					t.Errorf("%s stride %d piece %d: %d windows, want %d", enc, stride, pi, i, len(want))
				}
			}
		}
	}
}

// TestWindowRareVelocity checks each window's restated velocity against the latest
// set-velocity before its cut found by a plain scan, with one velocity bin (one
// set-velocity in the whole stream) and short windows, overlapping and not: the
// look-back reads each token once (it used to rescan to the stream's start at every
// cut).
func TestWindowRareVelocity(t *testing.T) {
	p := randomPiece(3, 20000, false)
	sortNotes(p.Notes)
	for _, stride := range []int{32, 13} {
		cfg := DefaultConfig()
		cfg.VelocityBins, cfg.MaxLen, cfg.Stride, cfg.MinLen = 1, 32, stride, 0
		e := mustEncoder(t, cfg)
		stream, _, err := e.Encode(p, Identity, nil)
		if err != nil {
			t.Fatal(err)
		}
		lo, hi := e.Vocab().velBase, e.Vocab().velBase+1
		windows := 0
		err = e.WindowsOf(stream, Identity, func(w Window) error {
			windows++
			if w.Start == 0 {
				return nil
			}
			var want int32
			for i := w.Start - 1; i >= 0; i-- {
				if id := stream[i].ID; id >= lo && id < hi {
					want = id
					break
				}
			}
			if first := e.Vocab().kinds[stream[w.Start].ID]; first == KindVelocity {
				want = 0 // the window opens with one
			}
			got := int32(0)
			if w.Prefix > 0 {
				got = w.Tokens[0].ID
			}
			if got != want {
				t.Fatalf("stride %d, window %d at %d: restates velocity %d, want %d", stride, w.Index, w.Start, got, want)
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
		if windows < len(stream)/32 {
			t.Fatalf("stride %d: %d windows for %d tokens", stride, windows, len(stream))
		}
	}
}

package tokenize

import (
	"errors"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

func TestDecodeErrors(t *testing.T) {
	tests := []struct {
		name    string
		grid    bool
		tokens  string // labels; "?N" for a raw id
		wantErr error
		index   int
	}{
		{"id past the vocabulary", false, "begin ?391", ErrUnknownID, 1},
		{"negative id", false, "begin ?-1", ErrUnknownID, 1},
		{"begin not first", false, "on.60 begin", ErrSequence, 1},
		{"token after end", false, "begin on.60 end off.60", ErrSequence, 3},
		{"token after padding", false, "on.60 pad off.60", ErrSequence, 2},
		{"grid position before any bar", true, "begin pos.0", ErrSequence, 1},
		{"grid pitch before any position", true, "begin bar pitch.60 dur.1 vel.1", ErrSequence, 2},
		{"grid duration without a pitch", true, "bar pos.0 dur.4", ErrSequence, 2},
		{"grid velocity without a duration", true, "bar pos.0 pitch.60 vel.3", ErrSequence, 3},
		{"grid note cut short by a bar", true, "bar pos.0 pitch.60 dur.3 bar", ErrSequence, 4},
		{"grid stream ends inside a note", true, "bar pos.0 pitch.60", ErrSequence, 3},
		{"grid position past the bar", true, "bar meter.3/4 pos.40", ErrSequence, 2},
		{"grid positions out of order", true, "bar pos.5 pos.5", ErrSequence, 2},
		{"grid meter after a position", true, "bar pos.0 meter.3/4", ErrSequence, 2},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			cfg := DefaultConfig()
			if tc.grid {
				cfg = gridConfig()
			}
			v, err := NewVocab(cfg)
			if err != nil {
				t.Fatal(err)
			}
			var in []int32
			for _, l := range strings.Fields(tc.tokens) {
				if raw, ok := strings.CutPrefix(l, "?"); ok {
					n, _ := strconv.Atoi(raw)
					in = append(in, int32(n))
					continue
				}
				id, ok := v.Lookup(l)
				if !ok {
					t.Fatalf("no token %q", l)
				}
				in = append(in, id)
			}
			_, err = Decode(in, cfg)
			var de *DecodeError
			if !errors.As(err, &de) || !errors.Is(err, tc.wantErr) || de.Index != tc.index {
				t.Fatalf("got %v, want %v at token %d", err, tc.wantErr, tc.index)
			}
		})
	}
}

func TestDecodeLenient(t *testing.T) {
	// Padding after the end, a note-on of a sounding key and an unmatched note-off
	// decode, with warnings.
	cfg := DefaultConfig()
	e := mustEncoder(t, cfg)
	p, err := Decode(mustIDs(e, "begin vel.31 on.60 dt.10 on.60 dt.20 off.60 off.61 end pad pad"), cfg)
	if err != nil {
		t.Fatal(err)
	}
	type n struct {
		on, off int64
		vel     uint8
	}
	var got []n
	for _, x := range p.Notes {
		got = append(got, n{x.StartTick, x.EndTick, x.Velocity})
	}
	// Bin 31 of 32 covers velocities 124..127; its middle is 125.
	if want := []n{{0, 10, 125}, {10, 30, 125}}; len(got) != 2 || got[0] != want[0] || got[1] != want[1] {
		t.Errorf("notes %+v, want %+v", got, want)
	}
	if p.Warnings["retriggered note"] != 1 || p.Warnings["note-off without on"] != 1 {
		t.Errorf("warnings %v", p.Warnings)
	}
}

// FuzzDecode feeds arbitrary id sequences to both decoders: they never panic, and a
// failure is always a *DecodeError. Seeds are the streams in testdata/.
func FuzzDecode(f *testing.F) {
	seeds, _ := filepath.Glob(filepath.Join("testdata", "*.ids"))
	for _, s := range seeds {
		data, err := os.ReadFile(s)
		if err != nil {
			f.Fatal(err)
		}
		var b []byte
		for _, w := range strings.Fields(string(data)) {
			n, err := strconv.Atoi(w)
			if err != nil {
				f.Fatalf("%s: %v", s, err)
			}
			b = append(b, byte(n), byte(n>>8))
		}
		f.Add(b)
	}
	perf, err := NewDecoder(DefaultConfig())
	if err != nil {
		f.Fatal(err)
	}
	gc := gridConfig()
	gc.Drums = DrumsKeep
	grid, err := NewDecoder(gc)
	if err != nil {
		f.Fatal(err)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		in := make([]int32, len(data)/2)
		for i := range in {
			in[i] = int32(int16(uint16(data[2*i]) | uint16(data[2*i+1])<<8))
		}
		for _, d := range []*Decoder{perf, grid} {
			p, err := d.Decode(in)
			if err != nil {
				if !isDecodeError(err) {
					t.Fatalf("error %v is not a *DecodeError", err)
				}
				continue
			}
			for _, n := range p.Notes {
				if n.EndTick < n.StartTick || n.Pitch > 127 || n.Velocity < 1 || n.Velocity > 127 || n.Channel > 15 {
					t.Fatalf("decoded an invalid note %+v", n)
				}
			}
		}
	})
}

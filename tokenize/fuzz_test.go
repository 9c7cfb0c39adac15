package tokenize

import (
	"encoding/binary"
	"errors"
	"testing"

	"github.com/relshard/relshard/ingest"
)

// pieceFromBytes builds a piece from fuzz input: a division, tempos, meters and notes
// with arbitrary keys and velocities and ticks up to 65535 (so that a run stays
// short; huge times are TestEncodeLimits' business).
func pieceFromBytes(data []byte) *ingest.Piece {
	next := func(n int) uint64 {
		var b [8]byte
		k := copy(b[:n], data)
		data = data[k:]
		return binary.LittleEndian.Uint64(b[:])
	}
	p := &ingest.Piece{TicksPerQuarter: int(next(2)%4096) + 1, Format: 1}
	if next(1)%8 == 0 {
		p.SMPTEFPS, p.TicksPerFrame = 25, int(next(1)%80)+1
	}
	for range next(1) % 4 {
		p.Tempos = append(p.Tempos, ingest.Tempo{Tick: int64(next(2)), USPerQuarter: uint32(next(3))})
	}
	for range next(1) % 4 {
		p.Meters = append(p.Meters, ingest.Meter{Tick: int64(next(2)), Num: uint8(next(1)), Denom: uint8(1 << (next(1) % 6))})
	}
	for len(data) > 0 && len(p.Notes) < 2000 {
		start := int64(next(2))
		n := ingest.Note{StartTick: start, EndTick: start + int64(next(2)), Pitch: uint8(next(1) % 128),
			Velocity: uint8(next(1)%127) + 1, Program: uint8(next(1) % 128)}
		if n.Pitch%7 == 0 {
			n.Drum, n.Channel = true, 9
		}
		p.Notes = append(p.Notes, n)
	}
	sortNotes(p.Notes)
	p.Tempos = sortedTempos(p.Tempos)
	var c clock
	c.reset(p)
	for i := range p.Notes {
		p.Notes[i].Start = c.seconds(float64(p.Notes[i].StartTick))
		p.Notes[i].End = c.seconds(float64(p.Notes[i].EndTick))
	}
	return p
}

func sortedTempos(ts []ingest.Tempo) []ingest.Tempo {
	for i := 1; i < len(ts); i++ {
		for j := i; j > 0 && ts[j].Tick < ts[j-1].Tick; j-- {
			ts[j], ts[j-1] = ts[j-1], ts[j]
		}
	}
	return ts
}

// FuzzEncode encodes arbitrary pieces with both encodings and augmentation: the
// encoder never panics; a stream it returns has non-decreasing times, decodes
// without error, and so does every window of it.
func FuzzEncode(f *testing.F) {
	f.Add([]byte{})
	f.Add([]byte("\x60\x00\x01\x02\x00\x00\x20\xa1\x07\x02\x00\x00\x00\x03\x02\x10\x00\x00\x00\x60\x00\x3c\x50\x00"))
	f.Add([]byte("\xe0\x01\x00\x00\x00\x00\x00\x00\x01\x00\x3c\x60\x00\x00\x00\x00\x80\x00\x3c\x50\x00\x10\x00\x00\x80\x00\x3c\x50\x00"))
	var encs []*Encoder
	for _, enc := range []string{Performance, Grid} {
		cfg := DefaultConfig()
		cfg.Encoding = enc
		cfg.Drums = DrumsKeep
		cfg.MaxLen, cfg.MinLen = 32, 0
		cfg.Transpose = []int{0, 11}
		if enc == Performance {
			cfg.Stretch = []float64{1, 0.5}
		}
		encs = append(encs, mustEncoder(f, cfg))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		p := pieceFromBytes(data)
		for _, e := range encs {
			d := &Decoder{vocab: e.vocab}
			for _, v := range e.Variants() {
				s, _, err := e.Encode(p, v, nil)
				if err != nil {
					continue
				}
				for i := 1; i < len(s); i++ {
					if s[i].Time < s[i-1].Time || s[i].MS < s[i-1].MS {
						t.Fatalf("%s %s: time decreases at token %d", e.cfg.Encoding, v, i)
					}
				}
				if _, err := d.Decode(ids(s)); err != nil {
					t.Fatalf("%s %s: own stream does not decode: %v", e.cfg.Encoding, v, err)
				}
			}
			_ = e.Windows(p, func(w Window) error {
				if _, err := d.Decode(ids(w.Tokens)); err != nil {
					t.Fatalf("%s: window %d does not decode: %v", e.cfg.Encoding, w.Index, err)
				}
				return nil
			})
		}
	})
}

// TestEncodeLimits checks that pieces too long to encode fail fast with ErrTooLong.
func TestEncodeLimits(t *testing.T) {
	far := func(tick int64, seconds float64) *ingest.Piece {
		return &ingest.Piece{TicksPerQuarter: 1, Notes: []ingest.Note{
			{StartTick: 0, EndTick: 1, End: 0.5, Pitch: 60, Velocity: 64},
			{StartTick: tick, EndTick: tick + 1, Start: seconds, End: seconds + 0.5, Pitch: 60, Velocity: 64}}}
	}
	tests := []struct {
		name string
		enc  string
		p    *ingest.Piece
	}{
		{"performance past 24 days", Performance, far(1, 3e6)},
		{"grid past the tick limit", Grid, far(1<<41, 0)},
		{"grid with too many bars", Grid, far(1<<30, 0)},
	}
	for _, tc := range tests {
		cfg := DefaultConfig()
		cfg.Encoding = tc.enc
		_, _, err := mustEncoder(t, cfg).Encode(tc.p, Identity, nil)
		if !errors.Is(err, ErrTooLong) {
			t.Errorf("%s: got %v, want ErrTooLong", tc.name, err)
		}
	}
}

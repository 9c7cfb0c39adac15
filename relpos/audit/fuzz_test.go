package audit

import (
	"encoding/binary"
	"reflect"
	"testing"

	"github.com/relshard/relshard/tokenize"
)

// tokensFrom turns fuzz bytes into a window: 4 bytes a token (time step, pitch,
// instrument), times non-decreasing unless the step's top bit asks for a drop.
func tokensFrom(data []byte) []tokenize.Token {
	var toks []tokenize.Token
	var t int32
	for len(data) >= 4 {
		step := int32(binary.LittleEndian.Uint16(data))
		if step&0x8000 != 0 {
			t -= step & 0xff
		} else {
			t += step & 0x3ff
		}
		tok := tokenize.Token{Time: t, Pitch: int16(data[2]) - 1, Inst: int16(data[3]) - 1}
		if tok.Pitch > 127 {
			tok.Pitch = -1
		}
		if tok.Inst > tokenize.InstDrums {
			tok.Inst = tokenize.InstDrums
		}
		toks = append(toks, tok)
		data = data[4:]
	}
	return toks
}

// The grouped pair count equals the naive loop for any window.
func FuzzPairCounter(f *testing.F) {
	f.Add([]byte{0, 0, 61, 1, 10, 0, 65, 1, 0, 0, 68, 129, 0x05, 0x80, 50, 0})
	f.Add([]byte{})
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) > 4*400 {
			return
		}
		toks := tokensFrom(data)
		fastT, fastP := newWideHist(0, 5000, 64), newHist(-maxPairDP, maxPairDP)
		slowT, slowP := newWideHist(0, 5000, 64), newHist(-maxPairDP, maxPairDP)
		var pc pairCounter
		pc.window(toks, fastT, fastP)
		naivePairs(toks, slowT, slowP)
		if !reflect.DeepEqual(fastT, slowT) || !reflect.DeepEqual(fastP, slowP) {
			t.Fatalf("grouped and naive counts differ for %d tokens", len(toks))
		}
	})
}

// Grid detection never panics, and names a division it tried or none.
func FuzzDetectGrid(f *testing.F) {
	f.Add(int16(480), []byte{0, 120, 240, 104, 1, 224, 1})
	f.Add(int16(0), []byte{1, 2, 3})
	f.Add(int16(-5), []byte{255, 255, 255, 255, 255, 255, 255, 127})
	f.Fuzz(func(t *testing.T, ppq int16, data []byte) {
		var onsets []int64
		for i := 0; i+8 <= len(data); i += 8 {
			onsets = append(onsets, int64(binary.LittleEndian.Uint64(data[i:]))>>8)
		}
		for i := 0; i+2 <= len(data) && len(onsets) < 64; i += 2 {
			onsets = append(onsets, int64(binary.LittleEndian.Uint16(data[i:])))
		}
		cfg := DefaultGridConfig()
		g := DetectGrid(onsets, int(ppq), cfg)
		if g.Division != 0 {
			found := false
			for _, n := range cfg.Divisions {
				found = found || n == g.Division
			}
			if !found || g.Share < cfg.Threshold {
				t.Fatalf("grid %+v not one of %v above the threshold", g, cfg.Divisions)
			}
		}
		if g.Share < 0 || g.Share > 1 {
			t.Fatalf("share %v", g.Share)
		}
	})
}

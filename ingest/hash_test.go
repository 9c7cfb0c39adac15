package ingest

import (
	"crypto/sha256"
	"encoding/hex"
	"testing"
)

// hashNotes builds a piece from (start, end, pitch, drum) at the given PPQ and hashes it.
func hashNotes(ppq int, notes ...Note) Piece {
	p := Piece{TicksPerQuarter: ppq, Notes: notes}
	newPieceHasher().hashPiece(&p)
	return p
}

func n(start, end int64, pitch uint8, drum bool) Note {
	return Note{StartTick: start, EndTick: end, Pitch: pitch, Drum: drum, Velocity: 64}
}

func TestPieceHashes(t *testing.T) {
	base := hashNotes(96, n(0, 48, 60, false), n(48, 96, 64, false), n(96, 192, 67, false), n(0, 24, 36, true))
	tests := []struct {
		name                  string
		p                     Piece
		sameMusical, sameTrsp bool
	}{
		{"other PPQ", hashNotes(480, n(0, 240, 60, false), n(240, 480, 64, false), n(480, 960, 67, false), n(0, 120, 36, true)), true, true},
		{"other order, track and velocity", hashNotes(96, Note{StartTick: 0, EndTick: 24, Pitch: 36, Drum: true, Track: 3, Velocity: 9},
			n(96, 192, 67, false), n(0, 48, 60, false), n(48, 96, 64, false)), true, true},
		{"transposed, drums kept", hashNotes(96, n(0, 48, 65, false), n(48, 96, 69, false), n(96, 192, 72, false), n(0, 24, 36, true)), false, true},
		{"drum key moved", hashNotes(96, n(0, 48, 65, false), n(48, 96, 69, false), n(96, 192, 72, false), n(0, 24, 41, true)), false, false},
		{"a duration changed", hashNotes(96, n(0, 47, 60, false), n(48, 96, 64, false), n(96, 192, 67, false), n(0, 24, 36, true)), false, false},
		{"a note missing", hashNotes(96, n(0, 48, 60, false), n(48, 96, 64, false), n(96, 192, 67, false)), false, false},
		{"a drum became a key", hashNotes(96, n(0, 48, 60, false), n(48, 96, 64, false), n(96, 192, 67, false), n(0, 24, 36, false)), false, false},
	}
	for _, tt := range tests {
		if got := tt.p.MusicalHash == base.MusicalHash; got != tt.sameMusical {
			t.Errorf("%s: same musical hash %v, want %v", tt.name, got, tt.sameMusical)
		}
		if got := tt.p.TransposedHash == base.TransposedHash; got != tt.sameTrsp {
			t.Errorf("%s: same transposed hash %v, want %v", tt.name, got, tt.sameTrsp)
		}
	}
	if len(base.MusicalHash) != 2*hashLen || len(base.TransposedHash) != 2*hashLen {
		t.Errorf("hash lengths %d, %d", len(base.MusicalHash), len(base.TransposedHash))
	}
}

// TestSMPTEHash: SMPTE onsets are fractions of seconds, so 25 fps x 40 ticks and
// 25 fps x 80 ticks agree on the same music, and differ from beat time.
func TestSMPTEHash(t *testing.T) {
	a := Piece{SMPTEFPS: 25, TicksPerFrame: 40, Notes: []Note{n(0, 1000, 60, false), n(1000, 2000, 62, false)}}
	b := Piece{SMPTEFPS: 25, TicksPerFrame: 80, Notes: []Note{n(0, 2000, 60, false), n(2000, 4000, 62, false)}}
	c := Piece{TicksPerQuarter: 1000, Notes: []Note{n(0, 1000, 60, false), n(1000, 2000, 62, false)}}
	h := newPieceHasher()
	h.hashPiece(&a)
	h.hashPiece(&b)
	h.hashPiece(&c)
	if a.MusicalHash != b.MusicalHash || a.MusicalHash == c.MusicalHash {
		t.Errorf("SMPTE hashes: %s %s %s", a.MusicalHash, b.MusicalHash, c.MusicalHash)
	}
}

func TestFileSHA256(t *testing.T) {
	// FIPS 180-2, appendix B.1: SHA-256("abc").
	want := "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
	if got := fileSHA256([]byte("abc")); got != want {
		t.Errorf("fileSHA256(abc) = %s, want %s", got, want)
	}
	sum := sha256.Sum256(nil)
	if got := fileSHA256(nil); got != hex.EncodeToString(sum[:]) {
		t.Errorf("empty: %s", got)
	}
}

func BenchmarkHashPiece(b *testing.B) {
	var notes []Note
	for i := range 2000 {
		notes = append(notes, n(int64(i*48), int64(i*48+40), uint8(40+i%40), i%7 == 0))
	}
	p := Piece{TicksPerQuarter: 96, Notes: notes}
	h := newPieceHasher()
	b.ReportAllocs()
	for b.Loop() {
		h.hashPiece(&p)
	}
}

package ingest

import (
	"cmp"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"hash"
	"math"
	"math/bits"
	"slices"
)

// Content hashes for duplicate detection.
//
// The musical hash covers the multiset of notes in beat time: each note's onset and
// duration in quarter notes as exact reduced fractions of ticks over ticks per quarter
// (so a file written at 96 PPQ and the same music at 480 PPQ agree), its pitch and its
// drum flag. Track, channel, program, velocity and the tempo map are left out, so the same
// notes split over other tracks or channels, re-voiced or re-tempoed, hash alike. SMPTE
// files have no beat time; their onsets are fractions of seconds (ticks over frames per
// second times ticks per frame) instead, so they match only other SMPTE files.
//
// The transposed hash is the musical hash with every non-drum pitch taken relative to the
// lowest non-drum pitch of the piece, so the same piece shifted by any number of
// semitones hashes alike; drum notes keep their keys (they name instruments, General
// MIDI 1 percussion map).

// hashVersion prefixes the hashed stream so that a change of encoding changes every hash.
const hashVersion = "relshard notes v1"

// noteKey is the part of a note that the content hashes cover.
type noteKey struct {
	start, dur int64
	pitch      uint8
	drum       bool
}

// pieceHasher computes content hashes, reusing its buffers between pieces.
type pieceHasher struct {
	keys             []noteKey
	buf, tbuf        []byte
	musical, transpo hash.Hash
}

func newPieceHasher() *pieceHasher {
	return &pieceHasher{musical: sha256.New(), transpo: sha256.New()}
}

// fileSHA256 returns the hex SHA-256 of a file's bytes.
func fileSHA256(data []byte) string {
	sum := sha256.Sum256(data)
	return hex.EncodeToString(sum[:])
}

// hashLen is the number of SHA-256 bytes kept in a content hash (128 bits).
const hashLen = 16

// hashPiece fills p.MusicalHash and p.TransposedHash.
func (h *pieceHasher) hashPiece(p *Piece) {
	// Onsets are num*scale/den quarter notes (or seconds for SMPTE).
	scale, den, unit := int64(1), int64(p.TicksPerQuarter), byte('q')
	if p.SMPTEFPS > 0 {
		scale, den, unit = 100, int64(math.Round(p.SMPTEFPS*100))*int64(max(p.TicksPerFrame, 1)), 's'
	}
	if den <= 0 {
		den = 1
	}
	h.keys = h.keys[:0]
	minPitch := uint8(255)
	for i := range p.Notes {
		n := &p.Notes[i]
		h.keys = append(h.keys, noteKey{start: n.StartTick, dur: n.EndTick - n.StartTick, pitch: n.Pitch, drum: n.Drum})
		if !n.Drum && n.Pitch < minPitch {
			minPitch = n.Pitch
		}
	}
	// Within one piece every note has the same denominator, so ordering by ticks orders
	// by beat time too; the order is thus the same at any PPQ and under transposition.
	// Parse delivers notes sorted by start tick, so only runs of equal starts need
	// sorting; anything else gets a full sort.
	if slices.IsSortedFunc(h.keys, func(a, b noteKey) int { return cmp.Compare(a.start, b.start) }) {
		for i := 0; i < len(h.keys); {
			j := i + 1
			for j < len(h.keys) && h.keys[j].start == h.keys[i].start {
				j++
			}
			if j-i > 1 {
				slices.SortFunc(h.keys[i:j], compareKeys)
			}
			i = j
		}
	} else {
		slices.SortFunc(h.keys, compareKeys)
	}
	h.musical.Reset()
	h.transpo.Reset()
	m := append(h.buf[:0], hashVersion...)
	m = append(m, unit) // quarter notes or seconds
	m = binary.AppendUvarint(m, uint64(len(h.keys)))
	tr := append(h.tbuf[:0], m...)
	// Chords share their onset and often their duration: encode each fraction once.
	var onset, length [2 * binary.MaxVarintLen64]byte
	var on, ln []byte
	lastStart, lastDur := int64(-1), int64(-1)
	for _, k := range h.keys {
		if k.start != lastStart || on == nil {
			on, lastStart = appendFraction(onset[:0], k.start*scale, den), k.start
		}
		if k.dur != lastDur || ln == nil {
			ln, lastDur = appendFraction(length[:0], k.dur*scale, den), k.dur
		}
		m = append(append(m, on...), ln...)
		m = append(m, k.pitch, boolByte(k.drum))
		tr = append(append(tr, on...), ln...)
		rel := k.pitch
		if !k.drum {
			rel -= minPitch
		}
		tr = append(tr, rel, boolByte(k.drum))
	}
	h.musical.Write(m)
	h.transpo.Write(tr)
	h.buf, h.tbuf = m, tr
	var sum [sha256.Size]byte
	p.MusicalHash = hex.EncodeToString(h.musical.Sum(sum[:0])[:hashLen])
	p.TransposedHash = hex.EncodeToString(h.transpo.Sum(sum[:0])[:hashLen])
}

func compareKeys(a, b noteKey) int {
	if c := cmp.Compare(a.start, b.start); c != 0 {
		return c
	}
	if a.drum != b.drum {
		if a.drum {
			return 1
		}
		return -1
	}
	if c := cmp.Compare(a.pitch, b.pitch); c != 0 {
		return c
	}
	return cmp.Compare(a.dur, b.dur)
}

// appendFraction appends num/den reduced to lowest terms, as two varints.
func appendFraction(b []byte, num, den int64) []byte {
	if num == 0 {
		return append(b, 0, 1)
	}
	g := gcd(uint64(abs64(num)), uint64(den))
	if g > 1 {
		num, den = num/int64(g), den/int64(g)
	}
	b = binary.AppendVarint(b, num)
	return binary.AppendUvarint(b, uint64(den))
}

// gcd is the binary (Stein's) greatest common divisor of a, b > 0: shifts and
// subtractions, no divisions.
func gcd(a, b uint64) uint64 {
	if a == 0 {
		return b
	}
	if b == 0 {
		return a
	}
	shift := bits.TrailingZeros64(a | b)
	a >>= bits.TrailingZeros64(a)
	for b != 0 {
		b >>= bits.TrailingZeros64(b)
		if a > b {
			a, b = b, a
		}
		b -= a
	}
	return a << shift
}

func abs64(x int64) int64 {
	if x < 0 {
		return -x
	}
	return x
}

func boolByte(b bool) byte {
	if b {
		return 1
	}
	return 0
}

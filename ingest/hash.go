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
// duration in quarter notes as exact fractions of ticks over ticks per quarter, all
// written over the piece's smallest common denominator (so a file written at 96 PPQ and
// the same music at 480 PPQ agree), its pitch and its drum flag. Track, channel, program, velocity and the tempo map are left out, so the same
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

// noteKey is the part of a note that the content hashes cover: the start tick, and
// packed in one word, ordered as the hash orders notes that start together: the drum
// flag (keys first), the key, the duration in ticks.
type noteKey struct {
	start int64
	rest  uint64
}

const (
	keyDrumBit  = 63
	keyPitchPos = 56
	keyDurMask  = 1<<keyPitchPos - 1
)

func packKey(n *Note) noteKey {
	dur := uint64(max(n.EndTick-n.StartTick, 0))
	r := min(dur, keyDurMask) | uint64(n.Pitch&0x7F)<<keyPitchPos
	if n.Drum {
		r |= 1 << keyDrumBit
	}
	return noteKey{n.StartTick, r}
}

func (k noteKey) dur() int64   { return int64(k.rest & keyDurMask) }
func (k noteKey) pitch() uint8 { return uint8(k.rest>>keyPitchPos) & 0x7F }
func (k noteKey) drum() bool   { return k.rest>>keyDrumBit != 0 }

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
		h.keys = append(h.keys, packKey(n))
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
			sortRunByRest(h.keys[i:j])
			i = j
		}
	} else {
		slices.SortFunc(h.keys, compareKeys)
	}
	// The onsets and durations are fractions over one denominator; dividing all of them
	// and the denominator by their greatest common divisor gives the smallest common
	// denominator, which is the same for any PPQ the same music is written at, and the
	// numerators over it: an exact encoding without reducing each fraction.
	g := uint64(den)
	for _, k := range h.keys {
		if g == 1 {
			break
		}
		for _, v := range [2]int64{k.start * scale, k.dur() * scale} {
			if r := uint64(max(v, 0)) % g; r != 0 {
				g = gcd(g, r)
			}
		}
	}
	pow2 := g&(g-1) == 0 // 1 included: shift instead of dividing
	shift := uint(bits.TrailingZeros64(g))
	div := func(v int64) uint64 {
		if pow2 {
			return uint64(max(v, 0)) >> shift
		}
		return uint64(max(v, 0)) / g
	}
	h.musical.Reset()
	h.transpo.Reset()
	m := append(h.buf[:0], hashVersion...)
	m = append(m, unit) // quarter notes or seconds
	m = binary.AppendUvarint(m, uint64(den)/g)
	m = binary.AppendUvarint(m, uint64(len(h.keys)))
	tr := append(h.tbuf[:0], m...)
	for _, k := range h.keys {
		on, ln := div(k.start*scale), div(k.dur()*scale)
		m = binary.AppendUvarint(binary.AppendUvarint(m, on), ln)
		tr = binary.AppendUvarint(binary.AppendUvarint(tr, on), ln)
		pitch, drum := k.pitch(), k.drum()
		m = append(m, pitch, boolByte(drum))
		rel := pitch
		if !drum {
			rel -= minPitch
		}
		tr = append(tr, rel, boolByte(drum))
	}
	h.musical.Write(m)
	h.transpo.Write(tr)
	h.buf, h.tbuf = m, tr
	var sum [sha256.Size]byte
	p.MusicalHash = hex.EncodeToString(h.musical.Sum(sum[:0])[:hashLen])
	p.TransposedHash = hex.EncodeToString(h.transpo.Sum(sum[:0])[:hashLen])
}

func compareKeys(a, b noteKey) int {
	return cmp.Or(cmp.Compare(a.start, b.start), cmp.Compare(a.rest, b.rest))
}

// sortRunByRest sorts notes that start together: insertion sort for the usual chord
// sizes, the library sort beyond.
func sortRunByRest(run []noteKey) {
	if len(run) > 16 {
		slices.SortFunc(run, compareKeys)
		return
	}
	for i := 1; i < len(run); i++ {
		k := run[i]
		j := i
		for j > 0 && run[j-1].rest > k.rest {
			run[j] = run[j-1]
			j--
		}
		run[j] = k
	}
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

func boolByte(b bool) byte {
	if b {
		return 1
	}
	return 0
}

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
//
// The hashed stream (version 2) is the version string, the unit ('q' or 's'), the
// common denominator and the note count as varints, then per note in order of onset,
// drum flag, key and duration: the onset's step from the previous note's and the
// duration (varints, numerators over the denominator), the key relative to the lowest
// non-drum key (drums: the key itself) and the drum flag. The transposed hash is the
// first 128 bits of the stream's SHA-256; the musical hash is that of the stream
// followed by the lowest non-drum key as one byte (255 when there is none), which
// makes the keys absolute again. Equal hashes mean equal note multisets either way.

// hashVersion prefixes the hashed stream so that a change of encoding changes every hash.
const hashVersion = "relshard notes v2"

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

func packKey(n *Note) noteKey { return packTicks(n.StartTick, n.EndTick, n.Pitch, n.Drum) }

func packTicks(start, end int64, pitch uint8, drum bool) noteKey {
	dur := uint64(max(end-start, 0))
	r := min(dur, keyDurMask) | uint64(pitch&0x7F)<<keyPitchPos
	if drum {
		r |= 1 << keyDrumBit
	}
	return noteKey{start, r}
}

func (k noteKey) dur() int64   { return int64(k.rest & keyDurMask) }
func (k noteKey) pitch() uint8 { return uint8(k.rest>>keyPitchPos) & 0x7F }
func (k noteKey) drum() bool   { return k.rest>>keyDrumBit != 0 }

// pieceHasher computes content hashes, reusing its buffers between pieces.
type pieceHasher struct {
	keys []noteKey
	buf  []byte
	sha  hash.Hash
	sum  [sha256.Size]byte
	one  [1]byte
}

func newPieceHasher() *pieceHasher { return &pieceHasher{sha: sha256.New()} }

// fileSHA256 returns the hex SHA-256 of a file's bytes.
func fileSHA256(data []byte) string {
	sum := sha256.Sum256(data)
	return hex.EncodeToString(sum[:])
}

// hashLen is the number of SHA-256 bytes kept in a content hash (128 bits).
const hashLen = 16

// maxRunInsert is the longest run of notes starting together that hashPiece keeps in
// order by insertion; a longer one (many tracks starting together) is sorted when it
// ends.
const maxRunInsert = 16

// hashPiece fills p.MusicalHash and p.TransposedHash, and returns the stats of the
// piece's notes for the filter (see statsOf, which it must agree with).
func (h *pieceHasher) hashPiece(p *Piece) pieceStats {
	keys := slices.Grow(h.keys[:0], len(p.Notes))
	seconds := 0.0
	for i := range p.Notes {
		n := &p.Notes[i]
		keys = append(keys, packKey(n))
		seconds = max(seconds, n.End)
	}
	h.keys = keys
	return h.hashKeys(p, keys, seconds)
}

// hashKeys is hashPiece given the packed keys of p's notes, in any order (it
// reorders them in place), and the latest note end in seconds. Parse packs the keys
// while it writes the notes (parseHashed), which saves reading the notes again.
func (h *pieceHasher) hashKeys(p *Piece, keys []noteKey, seconds float64) pieceStats {
	// Onsets are num*scale/den quarter notes (or seconds for SMPTE).
	scale, den, unit := int64(1), int64(p.TicksPerQuarter), byte('q')
	if p.SMPTEFPS > 0 {
		scale, den, unit = 100, int64(math.Round(p.SMPTEFPS*100))*int64(max(p.TicksPerFrame, 1)), 's'
	}
	if den <= 0 {
		den = 1
	}
	// One pass over the keys puts them in hash order, finds the lowest non-drum key
	// and the greatest common divisor of den and every onset and duration.
	//
	// Within one piece every note has the same denominator, so ordering by ticks orders
	// by beat time too; the order is thus the same at any PPQ and under transposition.
	// Parse delivers notes sorted by start tick, so each key is inserted into the run of
	// keys that start with it; anything else gets a full sort.
	//
	// The onsets and durations are fractions over one denominator; dividing all of them
	// and the denominator by their greatest common divisor gives the smallest common
	// denominator, which is the same for any PPQ the same music is written at, and the
	// numerators over it: an exact encoding without reducing each fraction. The divisor
	// is found as its power of two (the lowest set bit of all values ORed) times its odd
	// part, which a multiplication tests without dividing (see divisible).
	minPitch := uint8(255)
	st := noStats()
	st.seconds = seconds
	sorted := true
	prev, run := int64(math.MinInt64), 0
	ored := uint64(den)
	odd := ored >> bits.TrailingZeros64(ored)
	inv, lim := oddInverse(odd), math.MaxUint64/odd
	for i, k := range keys {
		if k.drum() {
			st.drums++
		} else {
			pitch := k.pitch()
			minPitch = min(minPitch, pitch)
			st.maxPitch = max(st.maxPitch, int(pitch))
		}
		on, ln := uint64(max(k.start*scale, 0)), uint64(max(k.dur()*scale, 0))
		ored |= on | ln
		if odd > 1 {
			if !divisible(on, inv, lim) {
				odd = gcd(odd, on%odd)
				inv, lim = oddInverse(odd), math.MaxUint64/odd
			}
			if !divisible(ln, inv, lim) {
				odd = gcd(odd, ln%odd)
				inv, lim = oddInverse(odd), math.MaxUint64/odd
			}
		}
		if !sorted {
			continue
		}
		switch {
		case k.start > prev:
			if i-run > maxRunInsert {
				slices.SortFunc(keys[run:i], compareKeys)
			}
			prev, run = k.start, i
		case k.start < prev:
			sorted = false
		case i+1-run > maxRunInsert:
			// a long run: sorted when it ends
		default:
			j := i
			for j > run && keys[j-1].rest > k.rest {
				keys[j] = keys[j-1]
				j--
			}
			keys[j] = k
		}
	}
	switch {
	case !sorted:
		slices.SortFunc(keys, compareKeys)
	case len(keys)-run > maxRunInsert:
		slices.SortFunc(keys[run:], compareKeys)
	}
	shift := uint(bits.TrailingZeros64(ored))
	g := odd << shift
	inv = oddInverse(odd)
	// div is v/g for v a multiple of g: an exact division by the odd part is a
	// multiplication by its inverse modulo 2^64.
	div := func(v int64) uint64 { return uint64(max(v, 0)) >> shift * inv }

	// One stream serves both hashes: the transposed hash is its SHA-256, and the
	// musical hash that of the stream followed by the lowest non-drum key, which
	// restores the absolute keys. The digest's state is read out after the stream and
	// again after the extra byte, so the notes are written and hashed once.
	m := append(h.buf[:0], hashVersion...)
	m = append(m, unit) // quarter notes or seconds
	m = binary.AppendUvarint(m, uint64(den)/g)
	m = binary.AppendUvarint(m, uint64(len(keys)))
	// The notes are written with an index into a buffer grown once to the most it can
	// take: two 10-byte varints and two bytes per note.
	i := len(m)
	m = slices.Grow(m, len(keys)*(2*binary.MaxVarintLen64+2))
	m = m[:cap(m)]
	last := uint64(0)
	for _, k := range keys {
		// Keys are sorted by onset, so the onset is written as the step from the
		// previous one: mostly a single byte.
		on, ln := div(k.start*scale), div(k.dur()*scale)
		on, last = on-last, on
		for on >= 0x80 {
			m[i] = byte(on) | 0x80
			on >>= 7
			i++
		}
		m[i] = byte(on)
		i++
		for ln >= 0x80 {
			m[i] = byte(ln) | 0x80
			ln >>= 7
			i++
		}
		m[i] = byte(ln)
		pitch, drum := k.pitch(), boolByte(k.drum())
		if drum == 0 {
			pitch -= minPitch
		}
		m[i+1], m[i+2] = pitch, drum
		i += 3
	}
	m = m[:i]
	h.buf = m
	h.sha.Reset()
	h.sha.Write(m)
	sum := h.sha.Sum(h.sum[:0])
	p.TransposedHash = hex.EncodeToString(sum[:hashLen])
	h.one[0] = minPitch
	h.sha.Write(h.one[:])
	sum = h.sha.Sum(h.sum[:0])
	p.MusicalHash = hex.EncodeToString(sum[:hashLen])
	st.notes = len(keys)
	if st.maxPitch >= 0 {
		st.minPitch = int(minPitch)
	}
	return st
}

func compareKeys(a, b noteKey) int {
	return cmp.Or(cmp.Compare(a.start, b.start), cmp.Compare(a.rest, b.rest))
}

// oddInverse returns the inverse of the odd number d modulo 2^64, by Newton's
// iteration: each step doubles the correct low bits, from 3 (d*d = 1 mod 8).
func oddInverse(d uint64) uint64 {
	x := d
	for range 5 {
		x *= 2 - d*x
	}
	return x
}

// divisible reports whether the odd number d divides v, given inv = oddInverse(d) and
// lim = MaxUint64/d: the multiples of d are exactly the v whose product with the
// inverse is at most lim (Granlund and Montgomery 1994, "Division by invariant
// integers using multiplication", section 9).
func divisible(v, inv, lim uint64) bool { return v*inv <= lim }

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

package ingest

import (
	"cmp"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// referenceHashes is the content hash encoding of hash.go written the plain way: keys
// sorted with the library sort, the common divisor found with remainders, every
// numerator divided, the varints appended, each hash a SHA-256 of a whole buffer. hashPiece must give the same hashes with
// its one-pass, division-free code.
func referenceHashes(p *Piece) (musical, transposed string) {
	scale, den, unit := int64(1), int64(p.TicksPerQuarter), byte('q')
	if p.SMPTEFPS > 0 {
		scale, den, unit = 100, int64(math.Round(p.SMPTEFPS*100))*int64(max(p.TicksPerFrame, 1)), 's'
	}
	if den <= 0 {
		den = 1
	}
	var keys []noteKey
	minPitch := uint8(255)
	for i := range p.Notes {
		n := &p.Notes[i]
		keys = append(keys, packKey(n))
		if !n.Drum && n.Pitch < minPitch {
			minPitch = n.Pitch
		}
	}
	slices.SortFunc(keys, func(a, b noteKey) int {
		return cmp.Or(cmp.Compare(a.start, b.start), cmp.Compare(a.rest, b.rest))
	})
	g := uint64(den)
	for _, k := range keys {
		for _, v := range [2]int64{k.start * scale, k.dur() * scale} {
			if r := uint64(max(v, 0)) % g; r != 0 {
				g = refGCD(g, r)
			}
		}
	}
	m := append([]byte(hashVersion), unit)
	m = binary.AppendUvarint(m, uint64(den)/g)
	m = binary.AppendUvarint(m, uint64(len(keys)))
	prev := uint64(0)
	for _, k := range keys {
		on, ln := uint64(max(k.start*scale, 0))/g, uint64(max(k.dur()*scale, 0))/g
		m = binary.AppendUvarint(binary.AppendUvarint(m, on-prev), ln)
		prev = on
		pitch, drum := k.pitch(), k.drum()
		if !drum {
			pitch -= minPitch
		}
		m = append(m, pitch, boolByte(drum))
	}
	ts := sha256.Sum256(m)
	ms := sha256.Sum256(append(m, minPitch))
	return hex.EncodeToString(ms[:hashLen]), hex.EncodeToString(ts[:hashLen])
}

// refGCD is Euclid's algorithm.
func refGCD(a, b uint64) uint64 {
	for b != 0 {
		a, b = b, a%b
	}
	return a
}

// TestHashPieceMatchesReference compares hashPiece with referenceHashes, and the stats
// it returns with statsOf, on random pieces: sorted as Parse delivers them and shuffled, with chords longer than the
// insertion limit, at metrical and SMPTE division, with ticks near the int64 limits.
func TestHashPieceMatchesReference(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	h := newPieceHasher()
	for iter := range 1000 {
		p := Piece{TicksPerQuarter: []int{1, 96, 120, 384, 480, 960, 1000, 7, 0}[rng.IntN(9)]}
		if rng.IntN(6) == 0 {
			p.SMPTEFPS = []float64{24, 25, 29.97002997002997, 30}[rng.IntN(4)]
			p.TicksPerFrame = rng.IntN(100)
		}
		grid := []int64{1, 2, 3, 5, 15, 24, 40, 120, 1 << 20}[rng.IntN(9)]
		tick := int64(0)
		if rng.IntN(20) == 0 {
			tick = math.MaxInt64/2 + rng.Int64N(1<<40) // overflows when scaled: clamped
		}
		for range rng.IntN(300) {
			if rng.IntN(3) > 0 {
				tick += grid * rng.Int64N(4)
			}
			dur := grid * rng.Int64N(8)
			if rng.IntN(50) == 0 {
				dur = rng.Int64N(1<<62) - 1<<60 // negative and huge durations
			}
			chord := 1
			if rng.IntN(40) == 0 {
				chord = maxRunInsert + rng.IntN(30)
			}
			for range chord {
				p.Notes = append(p.Notes, Note{StartTick: tick, EndTick: tick + dur, End: float64(rng.IntN(1000)) / 7,
					Pitch: uint8(rng.IntN(128)), Drum: rng.IntN(8) == 0, Velocity: 64})
			}
		}
		if iter%3 == 0 {
			rng.Shuffle(len(p.Notes), func(i, j int) { p.Notes[i], p.Notes[j] = p.Notes[j], p.Notes[i] })
		}
		st := h.hashPiece(&p)
		if want := statsOf([]Piece{p}); st != want {
			t.Fatalf("iteration %d: hashPiece stats %+v, statsOf %+v", iter, st, want)
		}
		wantM, wantT := referenceHashes(&p)
		if p.MusicalHash != wantM || p.TransposedHash != wantT {
			t.Fatalf("iteration %d (%d notes, PPQ %d, SMPTE %g x %d): hashes %s %s, reference %s %s",
				iter, len(p.Notes), p.TicksPerQuarter, p.SMPTEFPS, p.TicksPerFrame,
				p.MusicalHash, p.TransposedHash, wantM, wantT)
		}
	}
}

// TestDivisible checks the multiplicative divisibility test against the remainder.
func TestDivisible(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for range 100000 {
		d := rng.Uint64N(1<<uint(1+rng.IntN(63))) | 1
		v := rng.Uint64()
		switch rng.IntN(3) {
		case 0:
			v = d * rng.Uint64N(math.MaxUint64/d) // a multiple, possibly 0
		case 1:
			v = rng.Uint64N(1000)
		}
		inv := oddInverse(d)
		if d*inv != 1 {
			t.Fatalf("oddInverse(%d) = %d: product %d", d, inv, d*inv)
		}
		if got, want := divisible(v, inv, math.MaxUint64/d), v%d == 0; got != want {
			t.Fatalf("divisible(%d, by %d) = %v, want %v", v, d, got, want)
		}
	}
}

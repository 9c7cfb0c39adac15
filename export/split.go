package export

import (
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"math"
)

// Ratios are the shares of the train, validation and test splits. They need not
// sum to one; each split takes its share of the sum.
type Ratios struct {
	Train      float64 `yaml:"train" json:"train"`
	Validation float64 `yaml:"validation" json:"validation"`
	Test       float64 `yaml:"test" json:"test"`
}

// DefaultRatios is the 0.9 / 0.05 / 0.05 split.
var DefaultRatios = Ratios{Train: 0.9, Validation: 0.05, Test: 0.05}

// Validate checks that every share is finite and non-negative and one is positive.
func (r Ratios) Validate() error {
	for _, v := range []float64{r.Train, r.Validation, r.Test} {
		if v < 0 || math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("split ratios %v/%v/%v: each must be a finite number ≥ 0", r.Train, r.Validation, r.Test)
		}
	}
	if r.Train+r.Validation+r.Test <= 0 {
		return fmt.Errorf("split ratios: all zero")
	}
	return nil
}

// unitOf maps a content hash to a number in [0, 1) through a salted SHA-256, so
// that the split, the part and anything else derived from the same hash are
// independent of each other. It depends on nothing but the hash, so a piece keeps
// its split and part as the corpus grows.
func unitOf(salt, contentHash string) float64 {
	sum := sha256.Sum256([]byte(salt + "\x00" + contentHash))
	// 53 bits: exactly representable, uniform in [0, 1).
	return float64(binary.BigEndian.Uint64(sum[:8])>>11) / (1 << 53)
}

// SplitOf returns the split of a piece with the given content hash. All windows
// and augmentations of a piece, and all its duplicates (which share the
// transposition-invariant hash), land in the same split.
func SplitOf(contentHash string, r Ratios) string {
	total := r.Train + r.Validation + r.Test
	u := unitOf("relshard/split", contentHash) * total
	switch {
	case u < r.Train:
		return SplitTrain
	case u < r.Train+r.Validation:
		return SplitValidation
	default:
		if r.Test == 0 { // rounding at the very top with a zero test share
			if r.Validation > 0 {
				return SplitValidation
			}
			return SplitTrain
		}
		return SplitTest
	}
}

// Part is one of N deterministic slices of the pieces, for runs spread over
// several machines. Index is 1-based; the zero Part means the whole corpus.
type Part struct {
	Index int `json:"index"` // 1..Count
	Count int `json:"count"`
}

// Whole reports whether p selects every piece.
func (p Part) Whole() bool { return p.Count <= 1 }

// String formats p as "I/N".
func (p Part) String() string { return fmt.Sprintf("%d/%d", p.Index, p.Count) }

// Validate checks 1 ≤ Index ≤ Count, or the zero Part.
func (p Part) Validate() error {
	if p == (Part{}) {
		return nil
	}
	if p.Count < 1 || p.Index < 1 || p.Index > p.Count {
		return fmt.Errorf("part %d/%d: want I/N with 1 ≤ I ≤ N", p.Index, p.Count)
	}
	return nil
}

// Has reports whether the piece with the given content hash belongs to p. The
// assignment uses the coarsest duplicate hash, so duplicates meet in one part
// and are dropped there exactly as in a single run.
func (p Part) Has(contentHash string) bool {
	if p.Whole() {
		return true
	}
	return PartOf(contentHash, p.Count) == p.Index
}

// PartOf returns the 1-based part, of n, that owns the content hash.
func PartOf(contentHash string, n int) int {
	if n <= 1 {
		return 1
	}
	k := int(unitOf("relshard/part", contentHash) * float64(n))
	if k >= n {
		k = n - 1
	}
	return k + 1
}

package relpos

import (
	"math/rand/v2"
	"reflect"
	"testing"

	"github.com/relshard/relshard/tokenize"
)

// mixedWindow returns n tokens where each token is a drum hit with probability drums/8
// and a pitched instrument's token with probability pitched/8 (the rest have no
// instrument); time steps mix equal times, 10 ms quanta and long gaps.
func mixedWindow(r *rand.Rand, n, drums, pitched int) []tokenize.Token {
	tokens := make([]tokenize.Token, n)
	t := int32(0)
	for i := range tokens {
		switch r.IntN(6) {
		case 0, 1:
		case 2, 3:
			t += int32(10 * r.IntN(30))
		case 4:
			t += int32(r.IntN(40))
		default:
			t += int32(r.IntN(20000))
		}
		tk := tokenize.Token{Time: t, MS: t, Pitch: -1, Inst: -1}
		switch k := r.IntN(8); {
		case k < drums:
			tk.Inst, tk.Pitch = tokenize.InstDrums, int16(35+r.IntN(12))
		case k < drums+pitched:
			tk.Inst = int16(r.IntN(128))
			if r.IntN(4) > 0 {
				tk.Pitch = int16(20 + r.IntN(90))
			}
		}
		tokens[i] = tk
	}
	return tokens
}

// TestCountMatchesNaiveLong compares fast and naive counts on windows long enough
// (hundreds of tokens, classes from sparse to contiguous) that the fast path splits its
// work between near offsets (walks, bitset histograms) and far cuts (pointers, rank
// lookups), for the default config and the 64-bucket benchmark config in both modes.
func TestCountMatchesNaiveLong(t *testing.T) {
	if testing.Short() {
		t.Skip("long windows: skipped with -short")
	}
	r := rand.New(rand.NewPCG(3, 4))
	mixes := [][2]int{{1, 5}, {0, 8}, {8, 0}, {4, 4}, {0, 1}}
	for _, base := range []struct {
		name string
		cfg  Config
	}{{"default", DefaultConfig()}, {"bench", benchConfig()}} {
		for _, pairs := range []Mode{Causal, Bidirectional} {
			cfg := base.cfg
			cfg.Pairs = pairs
			c, err := NewCounter(cfg)
			if err != nil {
				t.Fatal(err)
			}
			for _, mix := range mixes {
				tokens := mixedWindow(r, 300+r.IntN(400), mix[0], mix[1])
				tally := c.NewTally()
				if err := c.Count(tally, tokens); err != nil {
					t.Fatal(err)
				}
				want, err := c.CountNaive(tokens)
				if err != nil {
					t.Fatal(err)
				}
				if got := c.Counts(tally); !reflect.DeepEqual(got, want) {
					t.Fatalf("%s %s, %d drums/8 %d pitched/8, %d tokens: fast counts differ from naive\n got %+v\nwant %+v",
						base.name, pairs, mix[0], mix[1], len(tokens), got, want)
				}
			}
		}
	}
}

package relpos

import (
	"math/rand/v2"
	"reflect"
	"testing"

	"github.com/relshard/relshard/tokenize"
)

// randomWindow returns n tokens with non-decreasing times (steps drawn so that equal
// times, small and large gaps all occur), some tokens without pitch, and a mix of drums,
// pitched instruments and tokens without an instrument.
func randomWindow(r *rand.Rand, n int) []tokenize.Token {
	tokens := make([]tokenize.Token, n)
	t := int32(r.IntN(1000))
	for i := range tokens {
		switch r.IntN(4) {
		case 0: // same time
		case 1:
			t += int32(r.IntN(5))
		case 2:
			t += int32(r.IntN(100))
		default:
			t += int32(r.IntN(3000))
		}
		tk := tokenize.Token{ID: int32(r.IntN(400)), Time: t, MS: t, Pitch: -1, Inst: -1}
		switch r.IntN(5) {
		case 0: // no pitch, no instrument
		case 1:
			tk.Inst = tokenize.InstDrums
			tk.Pitch = int16(35 + r.IntN(47))
		case 2:
			tk.Inst = int16(r.IntN(128)) // a pitched instrument's token without pitch (e.g. velocity)
		default:
			tk.Inst = int16(r.IntN(128))
			tk.Pitch = int16(r.IntN(128))
		}
		tokens[i] = tk
	}
	return tokens
}

func randomSpec(r *rand.Rand) SchemeSpec {
	switch r.IntN(3) {
	case 0:
		return SchemeSpec{Scheme: TypeLinear, Width: 1 + r.IntN(300), Clip: clipPtr(r.IntN(40))}
	case 1:
		b := 4 + 2*r.IntN(40)
		s := SchemeSpec{Scheme: TypeLog, Buckets: b, Max: b + r.IntN(5000)}
		if r.IntN(2) == 0 {
			s.Direction = Bidirectional
		} else {
			s.Direction = Causal
		}
		return s
	}
	n := 2 + r.IntN(20)
	e := make([]int64, n)
	v := int64(-r.IntN(5000))
	for i := range e {
		e[i] = v
		v += 1 + int64(r.IntN(800))
	}
	return SchemeSpec{Scheme: TypeEdges, Edges: e}
}

func randomConfig(r *rand.Rand) Config {
	cfg := DefaultConfig()
	if r.IntN(2) == 0 {
		cfg.Pairs = Bidirectional
	}
	for _, p := range []*[]SchemeSpec{&cfg.Distance, &cfg.Time, &cfg.Pitch} {
		*p = nil
		for range 1 + r.IntN(3) {
			*p = append(*p, randomSpec(r))
		}
	}
	cfg.Joint = r.IntN(2) == 0
	cfg.Budget = r.IntN(3) * 33
	cfg.ExactUpTo = []int{1, 2, 32, 700}[r.IntN(4)]
	return cfg
}

// TestCountMatchesNaive is the property test of the fast counting: on random windows and
// random configs, the counts of every scheme equal those of the O(L²) enumeration.
func TestCountMatchesNaive(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	for iter := range 300 {
		cfg := randomConfig(r)
		c, err := NewCounter(cfg)
		if err != nil {
			t.Fatalf("iter %d: %v", iter, err)
		}
		tally := c.NewTally()
		var want Counts
		for w := range 1 + r.IntN(3) {
			tokens := randomWindow(r, r.IntN(90))
			if err := c.Count(tally, tokens); err != nil {
				t.Fatal(err)
			}
			one, err := c.CountNaive(tokens)
			if err != nil {
				t.Fatal(err)
			}
			if w == 0 {
				want = one
			} else {
				want.add(one)
			}
		}
		got := c.Counts(tally)
		if !reflect.DeepEqual(got, want) {
			t.Fatalf("iter %d (%s pairs): fast counts differ from naive\n got %+v\nwant %+v", iter, cfg.Pairs, got, want)
		}
	}
}

func TestCountRejectsBadWindow(t *testing.T) {
	c, err := NewCounter(DefaultConfig())
	if err != nil {
		t.Fatal(err)
	}
	for _, tt := range []struct {
		name   string
		tokens []tokenize.Token
	}{
		{"time decreases", []tokenize.Token{{Time: 5, Pitch: -1, Inst: -1}, {Time: 4, Pitch: -1, Inst: -1}}},
		{"pitch 128", []tokenize.Token{{Pitch: 128, Inst: -1}}},
		{"inst 129", []tokenize.Token{{Pitch: -1, Inst: 129}}},
	} {
		tally := c.NewTally()
		if err := c.Count(tally, tt.tokens); err == nil {
			t.Errorf("%s: no error", tt.name)
		}
		if tally.Windows != 0 {
			t.Errorf("%s: window counted", tt.name)
		}
	}
}

// FuzzCount: any window, valid or not, never panics; a valid one counts as the naive
// enumeration does. Each token takes 4 bytes: time step, pitch, instrument, kind.
func FuzzCount(f *testing.F) {
	f.Add([]byte{0, 60, 0, 3, 10, 64, 0, 3, 0, 0, 0, 0, 200, 36, 128, 3})
	f.Add([]byte{5, 200, 200, 200})
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) > 4*200 {
			return
		}
		var tokens []tokenize.Token
		tm := int32(0)
		for i := 0; i+3 < len(data); i += 4 {
			step, p, inst, kind := data[i], data[i+1], data[i+2], data[i+3]
			if kind == 7 {
				tm -= int32(step) // a decreasing time: invalid window
			} else {
				tm += int32(step) * int32(1+kind%5*50)
			}
			tk := tokenize.Token{Time: tm, Pitch: int16(p) - 1, Inst: int16(inst) - 1}
			if kind%2 == 0 {
				tk.Pitch = -1
			}
			tokens = append(tokens, tk)
		}
		for _, pairs := range []Mode{Causal, Bidirectional} {
			cfg := DefaultConfig()
			cfg.Pairs, cfg.Joint = pairs, true
			c, err := NewCounter(cfg)
			if err != nil {
				t.Fatal(err)
			}
			tally := c.NewTally()
			err = c.Count(tally, tokens)
			want, nerr := c.CountNaive(tokens)
			if (err != nil) != (nerr != nil) {
				t.Fatalf("fast error %v, naive error %v", err, nerr)
			}
			if err != nil {
				continue
			}
			if got := c.Counts(tally); !reflect.DeepEqual(got, want) {
				t.Fatalf("%s: fast counts differ from naive", pairs)
			}
			c.Report(tally, "ms")
		}
	})
}

// TestCountMatchesNaiveTimeUnits compares fast and naive counts on windows whose times
// are whole multiples of a unit, as the encodings write them (performance: steps of
// shift_ms, often 10 ms; grid: grid steps), so that far time cuts are counted from the
// rank table as well as by pointers; and checks rankBelow against pointerBelow
// directly on every far cut.
func TestCountMatchesNaiveTimeUnits(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	tables := 0
	for _, tt := range []struct {
		unit, maxGap int32 // time unit, and the largest gap in units
		n            int
	}{
		{1, 3, 400}, {10, 5, 600}, {10, 50, 300}, {7, 2, 500}, {480, 4, 200}, {10, 400, 300}, {3, 0, 50},
	} {
		for _, pairs := range []Mode{Causal, Bidirectional} {
			cfg := DefaultConfig()
			cfg.Pairs = pairs
			cfg.Time = append(cfg.Time, SchemeSpec{Scheme: TypeLinear, Width: 1 + r.IntN(40), Clip: clipPtr(64)})
			c, err := NewCounter(cfg)
			if err != nil {
				t.Fatal(err)
			}
			tokens := make([]tokenize.Token, tt.n)
			tm := tt.unit * int32(r.IntN(100))
			for i := range tokens {
				if tt.maxGap > 0 && r.IntN(3) > 0 {
					tm += tt.unit * int32(r.IntN(int(tt.maxGap)+1))
				}
				tokens[i] = tokenize.Token{Time: tm, MS: tm, Pitch: int16(40 + r.IntN(40)), Inst: int16(r.IntN(4))}
				if r.IntN(6) == 0 {
					tokens[i].Inst, tokens[i].Pitch = tokenize.InstDrums, 36
				}
			}
			tally := c.NewTally()
			if err := c.Count(tally, tokens); err != nil {
				t.Fatal(err)
			}
			want, err := c.CountNaive(tokens) // the O(L²) enumeration as the reference
			if err != nil {
				t.Fatal(err)
			}
			if got := c.Counts(tally); !reflect.DeepEqual(got, want) {
				t.Fatalf("unit %d, gaps ≤ %d, %s: fast counts differ from naive\n got %+v\nwant %+v", tt.unit, tt.maxGap, pairs, got, want)
			}

			// The two far-cut counters on the whole window's groups.
			v := make([]int64, len(tokens))
			for i, tk := range tokens {
				v[i] = int64(tk.Time)
			}
			span := v[len(v)-1] - v[0]
			c.unit = timeUnit(v)
			c.countPointers(v, c.cuts[Time], c.timeIdx, make([]int64, len(c.cuts[Time])), make([]int64, c.exact+1), new(int64))
			vals, cnts, pre := c.gval, c.gcnt, c.gpre
			if c.unit <= 0 || span/c.unit+1 > int64(maxRankPerGroup*len(vals)) {
				continue // countPointers would not build the table
			}
			c.rankTable(vals, cnts, span)
			unit := c.unit
			tables++
			if span > 0 && unit%int64(tt.unit) != 0 {
				t.Errorf("unit %d: table step %d", tt.unit, unit)
			}
			for _, x := range []int64{-1, -int64(tt.unit), -int64(tt.unit) - 1, -2 * int64(tt.unit), -span, -span - 1, -span / 2, -span/3 - 1} {
				if x >= 0 {
					continue
				}
				if got, want := c.rankBelow(cnts, x), pointerBelow(vals, cnts, pre, x); got != want {
					t.Errorf("unit %d, cut %d: rankBelow %d, pointerBelow %d", tt.unit, x, got, want)
				}
			}
		}
	}
	if tables < 8 {
		t.Errorf("the rank table served %d windows of 14", tables)
	}
}

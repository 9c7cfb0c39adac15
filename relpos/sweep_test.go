package relpos

import (
	"math/rand/v2"
	"testing"

	"github.com/relshard/relshard/tokenize"
)

// A sweep counts every setting in one pass: its rows equal the coverage of each setting
// counted on its own.
func TestSweepMatchesSingleSettings(t *testing.T) {
	r := rand.New(rand.NewPCG(9, 10))
	g := Grid{
		Distance: KindGrid{Widths: []int{1, 3}, Clips: []int{2, 9}, Log: []LogSetting{{16, 40}}},
		Time:     KindGrid{Widths: []int{1, 50, 400}, Clips: []int{4, 30}, Log: []LogSetting{{32, 1000}, {8, 64}}},
		Pitch:    KindGrid{Widths: []int{1, 5}, Clips: []int{3}, Log: []LogSetting{{16, 48}}},
	}
	for _, pairs := range []Mode{Causal, Bidirectional} {
		base := DefaultConfig()
		base.Pairs = pairs
		cfg, err := SweepConfig(base, g)
		if err != nil {
			t.Fatal(err)
		}
		sweep, err := NewCounter(cfg)
		if err != nil {
			t.Fatal(err)
		}
		st := sweep.NewTally()
		var all [][]tokenize.Token
		for range 4 {
			all = append(all, randomWindow(r, 1+r.IntN(150)))
		}
		for _, w := range all {
			if err := sweep.Count(st, w); err != nil {
				t.Fatal(err)
			}
		}
		rows := sweep.SweepRows(sweep.Report(st, "ms"), 0)
		if want := 2*2 + 1 + 3*2 + 2 + 2 + 1; len(rows) != want {
			t.Fatalf("%d rows, want %d", len(rows), want)
		}
		for _, row := range rows {
			one := base
			spec, err := ParseScheme(row.Scheme)
			if err != nil {
				t.Fatal(err)
			}
			switch row.Kind {
			case "distance":
				one.Distance = []SchemeSpec{spec}
			case "time":
				one.Time = []SchemeSpec{spec}
			default:
				one.Pitch = []SchemeSpec{spec}
			}
			c, err := NewCounter(one)
			if err != nil {
				t.Fatal(err)
			}
			tally := c.NewTally()
			for _, w := range all {
				if err := c.Count(tally, w); err != nil {
					t.Fatal(err)
				}
			}
			rep := c.Report(tally, "ms")
			var s SchemeReport
			for _, k := range Kinds {
				if k.String() == row.Kind {
					s = rep.Kind(k).Schemes[0]
				}
			}
			if s.Pairs != row.Pairs || s.InsideShare != row.Inside || s.Effective != row.Effective {
				t.Errorf("%s %s %s: sweep %+v, alone pairs %d inside %v effective %v", pairs, row.Kind, row.Scheme, row, s.Pairs, s.InsideShare, s.Effective)
			}
		}
	}
}

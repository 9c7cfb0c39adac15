package relpos_test

import (
	"encoding/json"
	"fmt"
	"os"

	"github.com/relshard/relshard/relpos"
	"github.com/relshard/relshard/tokenize"
)

func ExampleLinear() {
	s, _ := relpos.Linear(1, 7) // clip(trunc(Δ/1), −7, 7) + 7
	for _, d := range []int64{-20, -8, -7, -3, 0, 3, 9} {
		fmt.Printf("Δ=%d bucket %d saturation %d\n", d, s.Bucket(d), s.Saturation(d))
	}
	// Output:
	// Δ=-20 bucket 0 saturation -1
	// Δ=-8 bucket 0 saturation -1
	// Δ=-7 bucket 0 saturation 0
	// Δ=-3 bucket 4 saturation 0
	// Δ=0 bucket 7 saturation 0
	// Δ=3 bucket 10 saturation 0
	// Δ=9 bucket 14 saturation 1
}

func ExampleLog() {
	// The buckets of Raffel et al. 2020 with 32 buckets up to 128, bidirectional.
	s, _ := relpos.Log(32, 128, 0, relpos.Bidirectional)
	for _, d := range []int64{-1, -16, -32, -128, 1, 16} {
		fmt.Printf("%d→%d ", d, s.Bucket(d))
	}
	fmt.Println()
	// Output:
	// -1→1 -16→10 -32→12 -128→15 1→17 16→26
}

func ExampleScheme_Table() {
	s, _ := relpos.Linear(10, 1)
	data, _ := json.Marshal(s.Table())
	fmt.Println(string(data))
	// Output:
	// {"name":"linear:width=10,clip=1","scheme":"linear","offset":"key - query","buckets":3,"width":10,"clip":1,"ranges":[{"from":null,"to":-20,"bucket":0,"saturated":"low"},{"from":-19,"to":-10,"bucket":0},{"from":-9,"to":9,"bucket":1},{"from":10,"to":19,"bucket":2},{"from":20,"to":null,"bucket":2,"saturated":"high"}]}
}

func ExampleParseScheme() {
	spec, err := relpos.ParseScheme("log:buckets=32,max=128")
	if err != nil {
		fmt.Println(err)
		return
	}
	s, _ := spec.Build(relpos.Causal)
	fmt.Println(s.Name, s.Buckets())
	_, err = relpos.ParseScheme("linear:width=2")
	fmt.Println(err)
	// Output:
	// log:buckets=32,max=128,exact=16,direction=causal 32
	// parse scheme "linear:width=2": linear needs clip=K
}

// Count the ten-token window of the trade example: bidirectional pairs clipped at 7.
func ExampleCounter() {
	cfg := relpos.DefaultConfig()
	cfg.Pairs = relpos.Bidirectional
	cfg.Distance = []relpos.SchemeSpec{{Scheme: relpos.TypeLinear, Width: 1, Clip: func() *int { k := 7; return &k }()}}
	c, err := relpos.NewCounter(cfg)
	if err != nil {
		fmt.Println(err)
		return
	}
	tally := c.NewTally()
	window := make([]tokenize.Token, 10)
	for i := range window {
		window[i] = tokenize.Token{Time: int32(10 * i), Pitch: int16(60 + i), Inst: 0}
	}
	if err := c.Count(tally, window); err != nil {
		fmt.Println(err)
		return
	}
	d := c.Report(tally, "ms").Distance
	s := d.Schemes[0]
	fmt.Printf("pairs %d inside %d (%.0f%%) saturated %d+%d, |Δ| p50 %d max %d\n",
		s.Pairs, s.Inside, 100*s.InsideShare, s.SatLow, s.SatHigh, d.Quantiles[0].Value, d.Max)
	// Output:
	// pairs 100 inside 94 (94%) saturated 3+3, |Δ| p50 3 max 9
}

func ExampleWriteTables() {
	s, _ := relpos.EdgesScheme([]int64{-100, -10, 0, 1})
	t := s.Table()
	t.Kind = "time"
	relpos.WriteTables(os.Stdout, []relpos.Table{t})
	// Output:
	// time edges:-100,-10,0,1: 3 buckets, offset = key - query
	// from  to    bucket  saturated
	// -inf  -101  0       low
	// -100  -11   0       -
	// -10   -1    1       -
	// 0     0     2       -
	// 1     +inf  2       high
}

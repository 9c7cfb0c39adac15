package tokenize

import (
	"os"
	"runtime"
	"testing"
	"time"

	"github.com/relshard/relshard/ingest"
)

// benchInput is the reference files' bytes and pieces, or a hand-made piece when
// the files are absent.
func benchInput(b testing.TB) (data [][]byte, pieces []ingest.Piece) {
	files, _ := refGlob()
	if len(files) == 0 {
		p := randomPiece(1, 20000, true)
		sortNotes(p.Notes)
		return nil, []ingest.Piece{*p}
	}
	for _, f := range files {
		d, err := os.ReadFile(f)
		if err != nil {
			b.Fatal(err)
		}
		ps, err := ingest.Parse(f, d, ingest.DefaultParseOptions())
		if err != nil {
			b.Fatal(err)
		}
		data = append(data, d)
		pieces = append(pieces, ps...)
	}
	return data, pieces
}

func benchConfigs() map[string]Config {
	p := DefaultConfig()
	p.Drums = DrumsKeep
	g := gridConfig()
	g.Drums = DrumsKeep
	return map[string]Config{Performance: p, Grid: g}
}

func BenchmarkEncode(b *testing.B) {
	_, pieces := benchInput(b)
	for _, name := range []string{Performance, Grid} {
		b.Run(name, func(b *testing.B) {
			e := mustEncoder(b, benchConfigs()[name])
			var dst []Token
			tokens := 0
			runtime.LockOSThread()
			defer runtime.UnlockOSThread()
			c0 := threadCPU()
			b.ReportAllocs()
			for b.Loop() {
				tokens = 0
				for i := range pieces {
					var err error
					dst, _, err = e.Encode(&pieces[i], Identity, dst[:0])
					if err != nil {
						b.Fatal(err)
					}
					tokens += len(dst)
				}
			}
			b.ReportMetric(float64(tokens), "tokens/op")
			reportCPU(b, c0)
		})
	}
}

func BenchmarkWindows(b *testing.B) {
	_, pieces := benchInput(b)
	for _, name := range []string{Performance, Grid} {
		b.Run(name, func(b *testing.B) {
			e := mustEncoder(b, benchConfigs()[name])
			windows := 0
			yield := func(Window) error { windows++; return nil }
			runtime.LockOSThread()
			defer runtime.UnlockOSThread()
			c0 := threadCPU()
			b.ReportAllocs()
			for b.Loop() {
				windows = 0
				for i := range pieces {
					if err := e.Windows(&pieces[i], yield); err != nil {
						b.Fatal(err)
					}
				}
			}
			b.ReportMetric(float64(windows), "windows/op")
			reportCPU(b, c0)
		})
	}
}

// reportCPU reports the thread CPU time per op since c0.
func reportCPU(b *testing.B, c0 time.Duration) {
	if c := threadCPU(); c > 0 {
		b.ReportMetric(float64(c-c0)/float64(b.N)/1e6, "cpu-ms/op")
	}
}

// BenchmarkParse parses the same files, for comparison with the two above.
func BenchmarkParse(b *testing.B) {
	data, _ := benchInput(b)
	if data == nil {
		b.Skip("no reference files to parse")
	}
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	c0 := threadCPU()
	b.ReportAllocs()
	for b.Loop() {
		for _, d := range data {
			if _, err := ingest.Parse("bench.mid", d, ingest.DefaultParseOptions()); err != nil {
				b.Fatal(err)
			}
		}
	}
	reportCPU(b, c0)
}

// BenchmarkWindowsVsParse measures, in one run on the same files, ingest.Parse and
// then encoding plus windowing of the parsed pieces, and reports their ratio (the
// target is under 0.25), by wall time and by the CPU time of the benchmark's
// thread (steadier on a loaded machine; garbage collection on other threads is not
// in it).
func BenchmarkWindowsVsParse(b *testing.B) {
	data, _ := benchInput(b)
	if data == nil {
		b.Skip("no reference files to parse")
	}
	for _, name := range []string{Performance, Grid} {
		b.Run(name, func(b *testing.B) {
			runtime.LockOSThread()
			defer runtime.UnlockOSThread()
			e := mustEncoder(b, benchConfigs()[name])
			yield := func(Window) error { return nil }
			var parse, encode, parseCPU, encodeCPU time.Duration
			b.ReportAllocs()
			for b.Loop() {
				for _, d := range data {
					c0, t0 := threadCPU(), time.Now()
					ps, err := ingest.Parse("bench.mid", d, ingest.DefaultParseOptions())
					c1, t1 := threadCPU(), time.Now()
					if err != nil {
						b.Fatal(err)
					}
					for i := range ps {
						if err := e.Windows(&ps[i], yield); err != nil {
							b.Fatal(err)
						}
					}
					c2, t2 := threadCPU(), time.Now()
					parse += t1.Sub(t0)
					encode += t2.Sub(t1)
					parseCPU += c1 - c0
					encodeCPU += c2 - c1
				}
			}
			b.ReportMetric(float64(encode)/float64(parse), "wall-ratio")
			if parseCPU > 0 {
				b.ReportMetric(float64(encodeCPU)/float64(parseCPU), "cpu-ratio")
			}
		})
	}
}

// TestNoPerTokenAllocation checks that a warmed encoder allocates nothing per token:
// encoding into a reused buffer and windowing a piece allocate nothing at all.
func TestNoPerTokenAllocation(t *testing.T) {
	if testing.Short() {
		t.Skip("allocation count in -short")
	}
	_, pieces := benchInput(t)
	p := &pieces[0]
	for name, cfg := range benchConfigs() {
		cfg.Transpose = []int{0, 2}
		if name == Performance {
			cfg.Stretch = []float64{1, 1.05}
		}
		e := mustEncoder(t, cfg)
		dst, _, err := e.Encode(p, Identity, nil)
		if err != nil {
			t.Fatal(err)
		}
		if a := testing.AllocsPerRun(5, func() { dst, _, _ = e.Encode(p, Identity, dst[:0]) }); a != 0 {
			t.Errorf("%s: Encode allocates %.0f times per piece of %d tokens", name, a, len(dst))
		}
		yield := func(Window) error { return nil }
		if err := e.Windows(p, yield); err != nil {
			t.Fatal(err)
		}
		if a := testing.AllocsPerRun(5, func() { _ = e.Windows(p, yield) }); a != 0 {
			t.Errorf("%s: Windows allocates %.0f times per piece", name, a)
		}
	}
}

package relpos

import (
	"math/rand/v2"
	"path/filepath"
	"slices"
	"testing"

	"github.com/relshard/relshard/tokenize"
)

// benchWindow is a performance-encoding-like window of n tokens: about a third of the
// tokens carry no pitch (time shifts, velocities), times advance by 0 to 500 ms, one
// token in eight is a drum hit.
func benchWindow(n int) []tokenize.Token {
	r := rand.New(rand.NewPCG(7, 8))
	tokens := make([]tokenize.Token, n)
	t := int32(0)
	for i := range tokens {
		tk := tokenize.Token{ID: int32(r.IntN(388)), Pitch: -1, Inst: -1}
		switch r.IntN(8) {
		case 0, 1:
			t += int32(10 * (1 + r.IntN(50)))
		case 2:
			tk.Inst = 0
		case 3:
			tk.Inst, tk.Pitch = tokenize.InstDrums, int16(35+r.IntN(12))
		default:
			tk.Inst, tk.Pitch = 0, int16(40+r.IntN(48))
		}
		tk.Time, tk.MS = t, t
		tokens[i] = tk
	}
	return tokens
}

// benchConfig has one scheme of about 64 buckets per offset kind.
func benchConfig() Config {
	cfg := DefaultConfig()
	cfg.Distance = []SchemeSpec{{Scheme: TypeLog, Buckets: 64, Max: 2048}}
	cfg.Time = []SchemeSpec{{Scheme: TypeLog, Buckets: 64, Max: 30000}}
	cfg.Pitch = []SchemeSpec{{Scheme: TypeLinear, Width: 1, Clip: clipPtr(32)}}
	return cfg
}

// BenchmarkCountFast and BenchmarkCountNaive count the same L = 2048 window with the
// same config (64-bucket schemes, instrument breakdown on); their ns/op ratio is the
// speed-up of the exact O(L·C) counting over enumerating the pairs.
func BenchmarkCountFast(b *testing.B) { benchCount(b, benchConfig(), benchWindow(2048)) }

func BenchmarkCountNaive(b *testing.B) {
	c, err := NewCounter(benchConfig())
	if err != nil {
		b.Fatal(err)
	}
	tokens := benchWindow(2048)
	b.ReportAllocs()
	b.SetBytes(int64(len(tokens)))
	for b.Loop() {
		if _, err := c.CountNaive(tokens); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkSample(b *testing.B) {
	cfg := benchConfig()
	cfg.Sample = 0.01
	c, err := NewCounter(cfg)
	if err != nil {
		b.Fatal(err)
	}
	tokens := benchWindow(2048)
	tally := c.NewTally()
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		if err := c.Sample(tally, tokens, uint64(i)); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkReport(b *testing.B) {
	c, err := NewCounter(DefaultConfig())
	if err != nil {
		b.Fatal(err)
	}
	tally := c.NewTally()
	if err := c.Count(tally, benchWindow(2048)); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		c.Report(tally, "ms")
	}
}

// BenchmarkCountJoint adds the time × pitch table, which walks every pitched pair.
func BenchmarkCountJoint(b *testing.B) {
	cfg := benchConfig()
	cfg.Joint = true
	benchCount(b, cfg, benchWindow(2048))
}

// BenchmarkCountDefault counts an L = 2048 performance-encoding-like window with
// DefaultConfig (distance linear clip 64 and log 32/128, time log 32/2048, pitch linear
// clip 24, instrument breakdown on, causal): the counting that export does per window.
func BenchmarkCountDefault(b *testing.B) { benchCount(b, DefaultConfig(), benchWindow(2048)) }

// perfWindow is a window of n tokens as the performance encoding writes them with its
// default of dropping drums: a quarter time shifts of 10 to 500 ms, one token in ten a
// velocity change (neither has an instrument), the rest note-ons and note-offs of
// pitched instruments, several at one time in chords.
func perfWindow(n int) []tokenize.Token {
	r := rand.New(rand.NewPCG(9, 10))
	tokens := make([]tokenize.Token, n)
	t := int32(0)
	for i := range tokens {
		tk := tokenize.Token{ID: int32(r.IntN(388)), Pitch: -1, Inst: -1}
		switch k := r.IntN(20); {
		case k < 5:
			t += int32(10 * (1 + r.IntN(50)))
		case k < 7:
		default:
			tk.Inst, tk.Pitch = int16(r.IntN(3)*8), int16(36+r.IntN(52))
		}
		tk.Time, tk.MS = t, t
		tokens[i] = tk
	}
	return tokens
}

// BenchmarkCountDefaultNoDrums is BenchmarkCountDefault on a window without drums, what
// export counts with the default token settings.
func BenchmarkCountDefaultNoDrums(b *testing.B) { benchCount(b, DefaultConfig(), perfWindow(2048)) }

// benchCount times exact counting of one window with cfg, after one count that grows
// the counter's scratch buffers, so allocations per op show any per-window allocation.
func benchCount(b *testing.B, cfg Config, tokens []tokenize.Token) {
	c, err := NewCounter(cfg)
	if err != nil {
		b.Fatal(err)
	}
	tally := c.NewTally()
	if err := c.Count(tally, tokens); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.SetBytes(int64(len(tokens)))
	for b.Loop() {
		if err := c.Count(tally, tokens); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkCountReal counts the windows of real files, Debian's openttd-openmsx
// music, in both encodings with DefaultConfig: their times come in whole steps and
// their density varies as music does, which the synthetic windows above do not show.
func BenchmarkCountReal(b *testing.B) {
	paths, _ := filepath.Glob(filepath.Join(openMSXDir, "*.mid"))
	if len(paths) == 0 {
		b.Skip("openttd-openmsx files missing (install Debian's openttd-openmsx)")
	}
	for _, enc := range []string{tokenize.Performance, tokenize.Grid} {
		b.Run(enc, func(b *testing.B) {
			cfg := tokenize.DefaultConfig()
			cfg.Encoding = enc
			e, err := tokenize.NewEncoder(cfg)
			if err != nil {
				b.Fatal(err)
			}
			var windows [][]tokenize.Token
			eachWindow(b, e, paths, func(w tokenize.Window) error {
				windows = append(windows, slices.Clone(w.Tokens))
				return nil
			})
			c, err := NewCounter(DefaultConfig())
			if err != nil {
				b.Fatal(err)
			}
			tally := c.NewTally()
			for _, w := range windows { // grows the scratch buffers once
				if err := c.Count(tally, w); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportAllocs()
			for b.Loop() {
				for _, w := range windows {
					if err := c.Count(tally, w); err != nil {
						b.Fatal(err)
					}
				}
			}
			b.ReportMetric(float64(len(windows)), "windows/op")
		})
	}
}

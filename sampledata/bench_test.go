package sampledata_test

import (
	"context"
	"testing"

	"github.com/relshard/relshard/sampledata"
)

// BenchmarkGenerate measures generation of a 200-file corpus (compose and write
// SMF bytes, nothing written to disk) with one worker and with two; ns/file is the
// per-file cost.
func BenchmarkGenerate(b *testing.B) {
	for _, w := range []struct {
		name    string
		workers int
	}{{"workers=1", 1}, {"workers=2", 2}} {
		b.Run(w.name, func(b *testing.B) {
			b.ReportAllocs()
			const files = 200
			var size int64
			for b.Loop() {
				size = 0
				err := sampledata.Generate(context.Background(), sampledata.Config{Files: files, Seed: 1, Workers: w.workers},
					func(f sampledata.File) error { size += int64(len(f.Data)); return nil })
				if err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*files), "ns/file")
			b.SetBytes(size)
		})
	}
}

// BenchmarkDemo measures building the demo corpus and the damaged set from scratch.
func BenchmarkDemo(b *testing.B) {
	b.ReportAllocs()
	for b.Loop() {
		if _, err := collect(sampledata.Config{Files: sampledata.DemoFiles, Seed: sampledata.DemoSeed}); err != nil {
			b.Fatal(err)
		}
	}
}

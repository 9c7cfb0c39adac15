package sampledata

import (
	"context"
	"sync"
)

// The embedded demo corpus: generated in memory on first use, identical every time.
const (
	// DemoSeed is the seed of the demo corpus.
	DemoSeed = 1865
	// DemoFiles is the number of good files in the demo corpus.
	DemoFiles = 36
)

var (
	demoOnce    = sync.OnceValue(func() []File { return collect(Config{Files: DemoFiles, Seed: DemoSeed}) })
	damagedOnce = sync.OnceValue(func() []File {
		return collect(Config{Files: 0, Damaged: len(damagedCases), Seed: DemoSeed})
	})
)

func collect(cfg Config) []File {
	var out []File
	err := Generate(context.Background(), cfg, func(f File) error {
		out = append(out, f)
		return nil
	})
	if err != nil {
		// Generation of a fixed config cannot fail except by a bug in this package.
		panic("sampledata: internal error generating the demo corpus: " + err.Error())
	}
	return out
}

// Demo returns the demo corpus: DemoFiles pieces in the three invented datasets
// (every kind, near-duplicates, format 0, format 2 and SMPTE files among them), in
// stable order. The slice and the bytes are the caller's own.
func Demo() []File { return cloneFiles(demoOnce()) }

// DemoDamaged returns the damaged set beside the demo corpus: one file of each
// DamagedCase, in the order of DamagedCases, in the folder DatasetSalvage.
func DemoDamaged() []File { return cloneFiles(damagedOnce()) }

func cloneFiles(fs []File) []File {
	out := make([]File, len(fs))
	for i, f := range fs {
		f.Data = clone(f.Data)
		out[i] = f
	}
	return out
}

package sampledata_test

import (
	"context"
	"sync"
	"testing"

	"github.com/relshard/relshard/sampledata"
)

// sampleSeed and sampleFiles define the sample the statistics tests read.
const (
	sampleSeed  = 2026
	sampleFiles = 500
)

var sampleOnce = sync.OnceValues(func() ([]sampledata.File, error) {
	return collect(sampledata.Config{Files: sampleFiles, Seed: sampleSeed})
})

// sample returns the 500-file sample, generated once per test binary.
func sample(t testing.TB) []sampledata.File {
	t.Helper()
	fs, err := sampleOnce()
	if err != nil {
		t.Fatalf("generate sample: %v", err)
	}
	return fs
}

func collect(cfg sampledata.Config) ([]sampledata.File, error) {
	var out []sampledata.File
	err := sampledata.Generate(context.Background(), cfg, func(f sampledata.File) error {
		out = append(out, f)
		return nil
	})
	return out, err
}

func mustCollect(t testing.TB, cfg sampledata.Config) []sampledata.File {
	t.Helper()
	fs, err := collect(cfg)
	if err != nil {
		t.Fatalf("Generate(%+v): %v", cfg, err)
	}
	return fs
}

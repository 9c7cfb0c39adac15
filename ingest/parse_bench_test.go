package ingest

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"testing"
	"time"

	gsmf "gitlab.com/gomidi/midi/v2/smf"
)

// openttdDir holds Debian's openttd-openmsx music: freely licensed SMF files made
// by others, used as the real-file reference corpus.
const openttdDir = "/usr/share/games/openttd/baseset/openmsx"

// openttdPaths returns the sorted .mid paths of openttdDir (none when absent).
func openttdPaths() []string {
	paths, _ := filepath.Glob(filepath.Join(openttdDir, "*.mid"))
	sort.Strings(paths)
	return paths
}

// requireRefs skips tb when an outside reference is missing, or fails it when
// RELSHARD_REQUIRE_REFS=1.
func requireRefs(tb testing.TB, format string, args ...any) {
	tb.Helper()
	msg := fmt.Sprintf(format, args...)
	if os.Getenv("RELSHARD_REQUIRE_REFS") == "1" {
		tb.Fatalf("%s (RELSHARD_REQUIRE_REFS=1)", msg)
	}
	tb.Skip(msg)
}

// loadBenchCorpus reads every openttd-openmsx file into memory once, skipping the
// benchmark when the package is not installed (apt-get install openttd-openmsx).
func loadBenchCorpus(b *testing.B) [][]byte {
	b.Helper()
	paths := openttdPaths()
	if len(paths) == 0 {
		requireRefs(b, "no .mid files in %s: install Debian's openttd-openmsx", openttdDir)
	}
	files := make([][]byte, len(paths))
	for i, p := range paths {
		d, err := os.ReadFile(p)
		if err != nil {
			b.Fatal(err)
		}
		files[i] = d
	}
	return files
}

// cpuMeter reports CPU time per op (user+system, all threads: GC included) as
// "cpu-ns/op", alongside the wall-clock ns/op.
type cpuMeter struct {
	b     *testing.B
	start time.Duration
}

func startCPU(b *testing.B) cpuMeter { return cpuMeter{b, processCPU()} }

func (m cpuMeter) stop() {
	if d := processCPU() - m.start; d > 0 {
		m.b.ReportMetric(float64(d.Nanoseconds())/float64(m.b.N), "cpu-ns/op")
	}
}

func corpusSize(files [][]byte) int64 {
	var n int64
	for _, f := range files {
		n += int64(len(f))
	}
	return n
}

// BenchmarkReadBytes is the floor: reading the same files from the page cache.
func BenchmarkReadBytes(b *testing.B) {
	files := loadBenchCorpus(b)
	paths := openttdPaths()
	b.SetBytes(corpusSize(files))
	b.ReportAllocs()
	cpu := startCPU(b)
	defer cpu.stop()
	for b.Loop() {
		for _, p := range paths {
			if _, err := os.ReadFile(p); err != nil {
				b.Fatal(err)
			}
		}
	}
}

// BenchmarkGomidiReadFrom is the reference reader on the same bytes.
func BenchmarkGomidiReadFrom(b *testing.B) {
	files := loadBenchCorpus(b)
	b.SetBytes(corpusSize(files))
	b.ReportAllocs()
	cpu := startCPU(b)
	defer cpu.stop()
	for b.Loop() {
		for _, f := range files {
			if _, err := gsmf.ReadFrom(bytes.NewReader(f)); err != nil {
				b.Fatal(err)
			}
		}
	}
}

// BenchmarkParse is the whole of Parse: events, pairing with pedal, sorting, seconds.
func BenchmarkParse(b *testing.B) {
	files := loadBenchCorpus(b)
	b.SetBytes(corpusSize(files))
	b.ReportAllocs()
	opts := DefaultParseOptions()
	cpu := startCPU(b)
	defer cpu.stop()
	for b.Loop() {
		for _, f := range files {
			if _, err := Parse("bench.mid", f, opts); err != nil {
				b.Fatal(err)
			}
		}
	}
}

// BenchmarkReaderOnly walks the events without pairing notes.
func BenchmarkReaderOnly(b *testing.B) {
	files := loadBenchCorpus(b)
	b.SetBytes(corpusSize(files))
	b.ReportAllocs()
	var r Reader
	events := 0
	cpu := startCPU(b)
	defer cpu.stop()
	for b.Loop() {
		for _, f := range files {
			if err := r.Reset("bench.mid", f, 0); err != nil {
				b.Fatal(err)
			}
			for r.NextTrack() {
				for r.Next() {
					events++
				}
			}
			if err := r.Err(); err != nil {
				b.Fatal(err)
			}
		}
	}
	b.ReportMetric(float64(events)/float64(b.N), "events/op")
}

package ingest

import (
	"context"
	"os"
	"path/filepath"
	"testing"
	"time"
)

// BenchmarkScan measures Scan over Debian's openttd-openmsx files (folder walk, read,
// SHA-256, parse, note pairing, filter and content hashes) next to merely reading the
// same files' bytes, in the same run, so the two can be compared as a ratio.
func BenchmarkScan(b *testing.B) {
	scanNeedsRefs(b, scanOpenMSXDir, "openttd-openmsx")
	paths, _ := filepath.Glob(filepath.Join(scanOpenMSXDir, "*.mid"))
	var total int64
	var datas [][]byte
	for _, p := range paths {
		data, err := os.ReadFile(p)
		if err != nil {
			b.Fatal(err)
		}
		total += int64(len(data))
		datas = append(datas, data)
	}
	b.Run("read-bytes", func(b *testing.B) {
		b.SetBytes(total)
		b.ReportAllocs()
		defer startScanCPU(b).stop()
		for b.Loop() {
			for _, p := range paths {
				if _, err := os.ReadFile(p); err != nil {
					b.Fatal(err)
				}
			}
		}
	})
	b.Run("hash-only", func(b *testing.B) {
		var pieces []Piece
		for i, data := range datas {
			ps, err := Parse(paths[i], data, DefaultParseOptions())
			if err != nil {
				b.Fatal(err)
			}
			pieces = append(pieces, ps...)
		}
		h := newPieceHasher()
		b.SetBytes(total)
		b.ReportAllocs()
		defer startScanCPU(b).stop()
		for b.Loop() {
			for i := range pieces {
				h.hashPiece(&pieces[i])
			}
		}
	})
	b.Run("in-memory-parse-hash", func(b *testing.B) {
		b.SetBytes(total)
		b.ReportAllocs()
		h := newPieceHasher()
		opts := DefaultParseOptions()
		defer startScanCPU(b).stop()
		for b.Loop() {
			for i, data := range datas {
				fileSHA256(data)
				pieces, _, err := parseHashed(paths[i], data, opts, h) // as Scan does
				if err != nil {
					b.Fatal(err)
				}
				releasePieces(pieces)
			}
		}
	})
	for _, w := range []struct {
		name    string
		workers int
	}{{"scan-1-worker", 1}, {"scan-all-cores", 0}} {
		b.Run(w.name, func(b *testing.B) {
			b.SetBytes(total)
			b.ReportAllocs()
			defer startScanCPU(b).stop()
			opts := DefaultOptions()
			opts.Workers = w.workers
			for b.Loop() {
				n := 0
				err := Scan(context.Background(), []Source{{Path: scanOpenMSXDir}}, opts, func(r *Result) error {
					n++
					r.Release() // as relshard scan does
					return nil
				})
				if err != nil || n != len(paths) {
					b.Fatalf("Scan: %v, %d results", err, n)
				}
			}
		})
	}
}

// scanCPU reports the process's CPU time per op (user and system, all threads) as
// "cpu-ns/op": on a shared machine it varies less than wall-clock time.
type scanCPU struct {
	b     *testing.B
	start time.Duration
}

func startScanCPU(b *testing.B) scanCPU { return scanCPU{b, processCPU()} }

func (m scanCPU) stop() {
	if d := processCPU() - m.start; d > 0 && m.b.N > 0 {
		m.b.ReportMetric(float64(d.Nanoseconds())/float64(m.b.N), "cpu-ns/op")
	}
}

package audit

import (
	"bytes"
	"os"
	"path/filepath"
	"testing"

	"github.com/relshard/relshard/ingest"
)

// benchPiece parses the longest openttd-openmsx file, or skips.
func benchPiece(b *testing.B) (*ingest.Piece, []byte) {
	b.Helper()
	files, _ := filepath.Glob(openmsxGlob)
	if len(files) == 0 {
		b.Skip("openttd-openmsx files missing")
	}
	var best *ingest.Piece
	var bestData []byte
	for _, f := range files {
		data, err := os.ReadFile(f)
		if err != nil {
			b.Fatal(err)
		}
		ps, err := ingest.Parse(f, data, ingest.DefaultParseOptions())
		if err != nil || len(ps) == 0 {
			continue
		}
		if best == nil || len(ps[0].Notes) > len(best.Notes) {
			best, bestData = &ps[0], data
		}
	}
	return best, bestData
}

// BenchmarkAuditPiece compares auditing one piece (notes, grid, encoding, windows,
// pair distributions, relpos coverage) with parsing it, in one run.
func BenchmarkAuditPiece(b *testing.B) {
	p, data := benchPiece(b)
	b.Run("parse", func(b *testing.B) {
		b.ReportAllocs()
		b.SetBytes(int64(len(data)))
		for b.Loop() {
			if _, err := ingest.Parse("bench", data, ingest.DefaultParseOptions()); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("audit", func(b *testing.B) {
		a, err := New(DefaultConfig())
		if err != nil {
			b.Fatal(err)
		}
		b.ReportAllocs()
		b.SetBytes(int64(len(data)))
		for b.Loop() {
			a.files = a.files[:0]
			if err := a.AddPiece("bench", "bench.mid", p); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func BenchmarkWasserstein(b *testing.B) {
	x, y := newDTHist(), newDTHist()
	for v := int64(0); v < 100_000; v += 7 {
		x.AddN(v, v%13+1)
		y.AddN(v+50, v%11+1)
	}
	b.ReportAllocs()
	for b.Loop() {
		histWasserstein(x, y)
	}
}

func BenchmarkWriteHTML(b *testing.B) {
	p, _ := benchPiece(b)
	a, err := New(DefaultConfig())
	if err != nil {
		b.Fatal(err)
	}
	if err := a.AddPiece("bench", "bench.mid", p); err != nil {
		b.Fatal(err)
	}
	rep := a.Report()
	b.ReportAllocs()
	for b.Loop() {
		var buf bytes.Buffer
		if err := rep.WriteHTML(&buf); err != nil {
			b.Fatal(err)
		}
	}
}

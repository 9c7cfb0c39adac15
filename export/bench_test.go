package export

import (
	"context"
	"fmt"
	"io"
	"testing"
)

// benchRows makes n rows of windows of l tokens shaped like performance-encoded
// piano: times rising in 10 ms steps, pitches in a few octaves, about a third of
// the tokens without pitch.
func benchRows(n, l int) ([]Row, int64) {
	rows := make([]Row, n)
	var bytes int64
	for i := range rows {
		r := Row{Piece: fmt.Sprintf("bench/piece%05d.mid#0", i/8), Dataset: "bench", Source: fmt.Sprintf("piece%05d.mid", i/8),
			ContentHash: fmt.Sprintf("%032x", i/8), Split: SplitTrain, Window: int32(i % 8), Stretch: 1}
		t := int32(0)
		for j := 0; j < l; j++ {
			x := (i*131 + j*17) % 390
			r.Tokens = append(r.Tokens, int32(x))
			if x%3 == 0 {
				t += int32(10 * (1 + x%7))
				r.Pitch = append(r.Pitch, -1)
			} else {
				r.Pitch = append(r.Pitch, int16(36+x%60))
			}
			r.Time = append(r.Time, t)
			r.Inst = append(r.Inst, 0)
		}
		rows[i] = r
		bytes += r.payloadBytes()
	}
	return rows, bytes
}

// BenchmarkWriteShard encodes one shard of 512 windows of 1024 tokens (about 6
// MiB of payload) per iteration; the throughput is in payload bytes.
func BenchmarkWriteShard(b *testing.B) {
	rows, payload := benchRows(512, 1024)
	for _, comp := range []string{CompressionZstd, CompressionSnappy, CompressionNone} {
		b.Run(comp, func(b *testing.B) {
			b.ReportAllocs()
			b.SetBytes(payload)
			var size int64
			for b.Loop() {
				cw := &countWriter{w: io.Discard}
				if err := EncodeShard(cw, rows, ShardOptions{Compression: comp}); err != nil {
					b.Fatal(err)
				}
				size = cw.n
			}
			b.ReportMetric(float64(size)/float64(payload), "file/payload")
		})
	}
}

// BenchmarkRun exports the generated test corpus end to end per iteration.
func BenchmarkRun(b *testing.B) {
	b.ReportAllocs()
	sources := testCorpusB(b)
	cfg := smallConfig()
	for b.Loop() {
		if _, err := Run(context.Background(), sources, cfg, Options{Out: b.TempDir(), Workers: 2, ToolVersion: "bench"}); err != nil {
			b.Fatal(err)
		}
	}
}

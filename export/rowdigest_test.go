package export

import (
	"slices"
	"testing"
)

// TestBatchDigestCoversEveryField: a batch digest changes with every value of
// every row and with the end-of-group flag, and only with them.
func TestBatchDigestCoversEveryField(t *testing.T) {
	base := func() []Row {
		return []Row{
			{Tokens: []int32{1, 2, 3}, Time: []int32{0, 10, 20}, Pitch: []int16{-1, 60, 64}, Inst: []int16{-1, 0, 0},
				Piece: "d:a.mid#0", Dataset: "d", Source: "a.mid", ContentHash: "ab", Split: SplitTrain, Window: 0, Transpose: 0, Stretch: 1},
			{Tokens: []int32{4}, Time: []int32{30}, Pitch: []int16{-1}, Inst: []int16{-1},
				Piece: "d:a.mid#0", Dataset: "d", Source: "a.mid", ContentHash: "ab", Split: SplitTrain, Window: 1, Transpose: 0, Stretch: 1},
		}
	}
	d := newBatchDigester()
	want := d.digest(base(), false)
	if got := d.digest(base(), false); got != want {
		t.Fatalf("digest of equal rows: %s, then %s", want, got)
	}
	if len(want) != 32 {
		t.Errorf("digest %q: want 32 hex digits (128 bits)", want)
	}
	for _, tc := range []struct {
		name   string
		change func([]Row) []Row
		end    bool
	}{
		{"end of group", func(r []Row) []Row { return r }, true},
		{"token", func(r []Row) []Row { r[0].Tokens[2] = 5; return r }, false},
		{"time", func(r []Row) []Row { r[1].Time[0] = 31; return r }, false},
		{"pitch", func(r []Row) []Row { r[0].Pitch[1] = 61; return r }, false},
		{"instrument", func(r []Row) []Row { r[0].Inst[0] = 3; return r }, false},
		{"token moved to the next row", func(r []Row) []Row {
			r[1].Tokens = append([]int32{r[0].Tokens[2]}, r[1].Tokens...)
			r[0].Tokens = r[0].Tokens[:2]
			return r
		}, false},
		{"piece", func(r []Row) []Row { r[1].Piece = "d:a.mid#1"; return r }, false},
		{"dataset", func(r []Row) []Row { r[0].Dataset = "e"; return r }, false},
		{"source", func(r []Row) []Row { r[0].Source = "b.mid"; return r }, false},
		{"content hash", func(r []Row) []Row { r[1].ContentHash = "ac"; return r }, false},
		{"split", func(r []Row) []Row { r[0].Split = SplitTest; return r }, false},
		{"strings shifted", func(r []Row) []Row { r[0].Dataset, r[0].Source = "da", ".mid"; return r }, false},
		{"window", func(r []Row) []Row { r[1].Window = 2; return r }, false},
		{"transpose", func(r []Row) []Row { r[0].Transpose = -2; return r }, false},
		{"stretch", func(r []Row) []Row { r[0].Stretch = 1.05; return r }, false},
		{"row left out", func(r []Row) []Row { return r[:1] }, false},
		{"rows swapped", func(r []Row) []Row { slices.Reverse(r); return r }, false},
	} {
		if got := d.digest(tc.change(base()), tc.end); got == want {
			t.Errorf("%s: digest unchanged", tc.name)
		}
	}
}

// TestWriterIdentity: the identity that journal entries carry changes with every
// writer option that changes shard bytes, and not with where pages spill.
func TestWriterIdentity(t *testing.T) {
	base := func() ShardOptions {
		return ShardOptions{RowGroupBytes: 1 << 20, CreatedBy: "relshard v1", Metadata: map[string]string{MetaSplit: SplitTrain}}
	}
	want := base().identity()
	spilled := base()
	spilled.SpillDir = t.TempDir()
	zstd := base()
	zstd.Compression = CompressionZstd
	for _, same := range []ShardOptions{base(), spilled, zstd} {
		if got := same.identity(); got != want {
			t.Errorf("%+v: identity %s, want %s", same, got, want)
		}
	}
	for name, change := range map[string]func(*ShardOptions){
		"compression":   func(o *ShardOptions) { o.Compression = CompressionSnappy },
		"row group":     func(o *ShardOptions) { o.RowGroupBytes = 2 << 20 },
		"created by":    func(o *ShardOptions) { o.CreatedBy = "relshard v2" },
		"metadata":      func(o *ShardOptions) { o.Metadata[MetaSplit] = SplitTest },
		"metadata key":  func(o *ShardOptions) { o.Metadata[MetaToolVersion] = "v1" },
		"default group": func(o *ShardOptions) { o.RowGroupBytes = 0 },
	} {
		o := base()
		change(&o)
		if o.identity() == want {
			t.Errorf("%s: identity unchanged", name)
		}
	}
}

// BenchmarkBatchDigest digests a batch of writeBatch windows of 2048 tokens, as an
// export does for every batch it hands to a shard's encoder.
func BenchmarkBatchDigest(b *testing.B) {
	rows := make([]Row, writeBatch)
	size := int64(0)
	for i := range rows {
		r := &rows[i]
		for j := range 2048 {
			r.Tokens = append(r.Tokens, int32(j%300))
			r.Time = append(r.Time, int32(j*10))
			r.Pitch = append(r.Pitch, int16(j%128))
			r.Inst = append(r.Inst, int16(j%7))
		}
		r.Piece, r.Dataset, r.Source, r.ContentHash, r.Split = "d:a.mid#0", "d", "a.mid", "0123456789abcdef", SplitTrain
		size += r.payloadBytes()
	}
	d := newBatchDigester()
	b.SetBytes(size)
	b.ReportAllocs()
	for b.Loop() {
		d.digest(rows, false)
	}
}

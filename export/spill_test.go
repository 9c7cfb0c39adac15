package export

import (
	"bytes"
	"encoding/json"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	pqzstd "github.com/parquet-go/parquet-go/compress/zstd"
)

// TestSpillSameBytes checks that keeping the pages of the open row group in
// spill files gives the same shard bytes as keeping them in memory, for several
// row groups, and leaves no file behind.
func TestSpillSameBytes(t *testing.T) {
	rows, _ := benchRows(300, 512)
	for _, compression := range []string{CompressionZstd, CompressionSnappy, CompressionNone} {
		t.Run(compression, func(t *testing.T) {
			opt := ShardOptions{Compression: compression, RowGroupBytes: 256 << 10, CreatedBy: "relshard test"}
			var mem bytes.Buffer
			if err := EncodeShard(&mem, rows, opt); err != nil {
				t.Fatal(err)
			}
			dir := t.TempDir()
			opt.SpillDir = dir
			var spilled bytes.Buffer
			if err := EncodeShard(&spilled, rows, opt); err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(mem.Bytes(), spilled.Bytes()) {
				t.Errorf("spilled shard differs: %d bytes, in memory %d", spilled.Len(), mem.Len())
			}
			// the pool is in use: a row group's pages went to its files
			enc, err := newShardEncoder(&bytes.Buffer{}, opt)
			if err != nil {
				t.Fatal(err)
			}
			if err := enc.write(rows[:100]); err != nil {
				t.Fatal(err)
			}
			if err := enc.flush(); err != nil {
				t.Fatal(err)
			}
			if len(enc.spill.files) == 0 {
				t.Error("no spill file was used for a row group")
			}
			if err := enc.close(); err != nil {
				t.Fatal(err)
			}
			if left, _ := os.ReadDir(dir); len(left) != 0 {
				t.Errorf("spill files left behind: %v", left)
			}
		})
	}
}

// TestSpillDirMissing checks that a spill folder that cannot take files fails
// the shard with an error naming the spill, instead of panicking.
func TestSpillDirMissing(t *testing.T) {
	rows, _ := benchRows(8, 64)
	opt := ShardOptions{SpillDir: filepath.Join(t.TempDir(), "gone")}
	err := EncodeShard(&bytes.Buffer{}, rows, opt)
	if err == nil || !strings.Contains(err.Error(), "page spill file") {
		t.Fatalf("EncodeShard into a missing spill folder: %v, want a page spill error", err)
	}
}

// TestRemoveTempsSpill checks that a spill file a crash left under its name (on
// systems that cannot unlink open files) is removed by the next run.
func TestRemoveTempsSpill(t *testing.T) {
	dir := t.TempDir()
	for _, d := range []string{"", SplitTrain} {
		if err := os.MkdirAll(filepath.Join(dir, d), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, d, spillPrefix+"123"+TempSuffix), []byte("x"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if err := removeTemps(dir); err != nil {
		t.Fatal(err)
	}
	for _, d := range []string{"", SplitTrain} {
		if _, err := os.Stat(filepath.Join(dir, d, spillPrefix+"123"+TempSuffix)); !os.IsNotExist(err) {
			t.Errorf("spill file in %q not removed: %v", d, err)
		}
	}
}

// TestZstdCodecMatchesParquetGo checks the windowed codec against parquet-go's own
// Zstandard codec (an independent implementation of the same compression, the
// library's default): for pages under the 1 MiB window the compressed bytes are
// the same, and every output decodes to its input.
func TestZstdCodecMatchesParquetGo(t *testing.T) {
	ours, ref := newZstdCodec(pqzstd.DefaultLevel), &pqzstd.Codec{Level: pqzstd.DefaultLevel}
	rng := rand.New(rand.NewPCG(1, 2))
	for _, n := range []int{0, 1, 100, 4 << 10, 128 << 10, 128<<10 + 1, 300 << 10, zstdWindow - 1, zstdWindow} {
		src := make([]byte, n)
		for i := range src {
			// compressible, with matches near and far
			switch {
			case i >= 70_000 && rng.IntN(4) != 0:
				src[i] = src[i-70_000]
			default:
				src[i] = byte(rng.IntN(16))
			}
		}
		got, err := ours.Encode(nil, src)
		if err != nil {
			t.Fatal(err)
		}
		want, err := ref.Encode(nil, src)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got, want) {
			t.Errorf("%d-byte page: %d compressed bytes, parquet-go's codec %d", n, len(got), len(want))
		}
		back, err := ref.Decode(nil, got)
		if err != nil || !bytes.Equal(back, src) {
			t.Errorf("%d-byte page does not decode back with parquet-go's codec: %v", n, err)
		}
		if back, err = ours.Decode(nil, want); err != nil || !bytes.Equal(back, src) {
			t.Errorf("%d-byte page: our decoder: %v", n, err)
		}
	}
}

// TestEntrySpoolEncode checks that a manifest whose files come from the spool is
// byte for byte the manifest encoded with its files in memory (encoding/json's
// MarshalIndent), and that it decodes to the entries written.
func TestEntrySpoolEncode(t *testing.T) {
	for _, n := range []int{0, 1, 3, 1000} {
		var files []FileEntry
		for i := range n {
			e := FileEntry{Dataset: "säle <&>", Source: "a/" + strings.Repeat("x", i%7) + "\"q\".mid", Status: "ok", Pieces: int64(i), Windows: int64(2 * i)}
			if i%3 == 1 {
				e.Status, e.Reason, e.Class = "skipped", "a/b.mid: track 2 at byte 0x1f: truncated\u2028", "truncated"
			}
			files = append(files, e)
		}
		m := &Manifest{Format: ManifestKind, SchemaVersion: SchemaVersion, Shards: []Shard{}, Files: files,
			Vocabulary: json.RawMessage(`{"a":1}`), Buckets: json.RawMessage(`[]`), Coverage: json.RawMessage(`{}`)}
		if m.Files == nil {
			m.Files = []FileEntry{}
		}
		want, err := m.Encode()
		if err != nil {
			t.Fatal(err)
		}
		spool, err := newEntrySpool(t.TempDir())
		if err != nil {
			t.Fatal(err)
		}
		for _, f := range files {
			if err := spool.add(f); err != nil {
				t.Fatal(err)
			}
		}
		m.Files = nil
		var got bytes.Buffer
		if err := m.encodeSpooled(&got, spool); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got.Bytes(), want) {
			t.Errorf("%d files: spooled manifest differs from MarshalIndent:\n%s\nwant\n%s", n, got.Bytes(), want)
		}
		back, err := DecodeManifest(got.Bytes())
		if err != nil {
			t.Fatal(err)
		}
		if len(back.Files) != len(files) || (n > 0 && !slices.Equal(back.Files, files)) {
			t.Errorf("%d files: decoded %d entries, different", n, len(back.Files))
		}
		if spool.tally.files != int64(n) {
			t.Errorf("tally %d files, want %d", spool.tally.files, n)
		}
		spool.close()
	}
}

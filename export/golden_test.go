package export

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"flag"
	"os"
	"path/filepath"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// goldenRows are the rows of testdata/shard.parquet.
func goldenRows() []Row {
	var rows []Row
	for _, f := range synthFiles(6) {
		rows = append(rows, f.rows...)
	}
	return rows
}

// TestGoldenShard pins the bytes of a shard: a change of the row layout, the
// writer options or the Parquet library shows here first. Refresh with -update
// after checking the change is intended (and bump SchemaVersion if readers must
// know).
func TestGoldenShard(t *testing.T) {
	path := filepath.Join(t.TempDir(), "shard.parquet")
	opt := ShardOptions{RowGroupBytes: 4096, CreatedBy: "relshard golden", Metadata: map[string]string{MetaSchemaVersion: "1", MetaTimeUnit: "ms"}}
	if _, err := WriteShard(path, goldenRows(), opt); err != nil {
		t.Fatal(err)
	}
	got, _ := os.ReadFile(path)
	golden := filepath.Join("testdata", "shard.parquet")
	if *update {
		if err := os.WriteFile(golden, got, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatalf("%v (run with -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("shard bytes differ from %s (%d vs %d bytes)", golden, len(got), len(want))
	}
	// New shard bytes need a new writerFormat, or a rerun would keep the shards of
	// an interrupted run by the old build as its own: add the golden shard's
	// SHA-256 here under the new number.
	formats := map[int]string{
		1: "13133acd9e72cfcf0754d8adc89496a2583f08381285fa838aae4e642c00d916",
		// Batches of 8 rows instead of 64: larger shards cut their pages at other
		// rows, but this one's pages are its row groups, so its bytes are unchanged.
		2: "13133acd9e72cfcf0754d8adc89496a2583f08381285fa838aae4e642c00d916",
	}
	if sum := sha256.Sum256(got); formats[writerFormat] != hex.EncodeToString(sum[:]) {
		t.Errorf("writerFormat %d is not the format of these shard bytes (sha256 %x): add a new writerFormat", writerFormat, sum)
	}
}

// FuzzVerifyDamagedShard damages one shard of a sound dataset with arbitrary
// bytes: verify must name the shard, without panic or hang (it reads a shard with
// the Parquet reader only when its SHA-256 matches the manifest).
func FuzzVerifyDamagedShard(f *testing.F) {
	seed, err := os.ReadFile(filepath.Join("testdata", "shard.parquet"))
	if err != nil {
		f.Fatal(err)
	}
	f.Add(seed[:len(seed)/2])
	f.Add(seed[len(seed)-64:])
	flip := bytes.Clone(seed)
	flip[len(flip)-12] ^= 0xff // inside the footer length
	f.Add(flip)
	f.Add([]byte{})
	dir := f.TempDir()
	m, err := writeOutput(context.Background(), synthSpec(dir, 1), feedOf(synthFiles(6)), noCoverage)
	if err != nil {
		f.Fatal(err)
	}
	target := filepath.Join(dir, filepath.FromSlash(m.Shards[0].Path))
	orig, err := os.ReadFile(target)
	if err != nil {
		f.Fatal(err)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		if err := os.WriteFile(target, data, 0o644); err != nil {
			t.Fatal(err)
		}
		defer os.WriteFile(target, orig, 0o644)
		probs, err := Verify(context.Background(), dir)
		if err != nil {
			t.Fatal(err)
		}
		if bytes.Equal(data, orig) {
			return
		}
		for _, p := range probs {
			if p.Path == m.Shards[0].Path {
				return
			}
		}
		t.Fatalf("damaged shard not reported; problems: %v", probs)
	})
}

// FuzzDecodeManifest checks that any manifest text is decoded or refused without
// panic, and that a decoded one survives verify's checks of itself.
func FuzzDecodeManifest(f *testing.F) {
	seed, err := os.ReadFile(filepath.Join("testdata", "manifest.json"))
	if err != nil {
		f.Fatal(err)
	}
	f.Add(seed)
	f.Add([]byte(`{"format":"relshard-dataset","shards":[{"path":"../x"}]}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		m, err := DecodeManifest(data)
		if err != nil {
			return
		}
		dir := t.TempDir()
		if err := os.WriteFile(filepath.Join(dir, ManifestName), data, 0o644); err != nil {
			t.Fatal(err)
		}
		probs, err := Verify(context.Background(), dir)
		if err != nil {
			t.Fatalf("verify of a decodable manifest failed: %v", err)
		}
		if len(m.Shards) > 0 && len(probs) == 0 {
			t.Fatalf("verify found no problem with shards that do not exist")
		}
	})
}

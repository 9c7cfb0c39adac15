package export

import (
	"bytes"
	"os"
	"path/filepath"
	"testing"
)

// FuzzJournal resumes from arbitrary journal bytes, as a run killed at any point
// (or a damaged disk) may leave them: openJournal must not fail or panic on them,
// must keep exactly the leading complete, sound lines (the file it leaves is a
// prefix of the old one, ending at a line end), and reuse and candidate must refuse every entry
// whose shard is not on disk.
func FuzzJournal(f *testing.F) {
	good := `{"digest":"ab","shard":{"path":"train/part-000.parquet","split":"train","rows":3,"tokens":96,"bytes":1200,"sha256":"ab"}}` + "\n"
	for _, seed := range []string{
		"",
		good,
		good + good[:40],
		good + "{\"digest\":\"\"}\n" + good,
		good + "not json\n",
		`{"digest":"ab","shard":{"path":"train/part-000.parquet","split":"train","rows":3,"bytes":1200,"sha256":"ab"},"batches":[{"rows":3,"end":true,"digest":"00"}]}` + "\n",
		`{"digest":"ab","shard":{"path":"t.parquet","rows":2},"batches":[{"rows":-1,"digest":""},{"rows":3}]}` + "\n",
		`{"digest":"cd","shard":{"path":"../../outside","bytes":-1,"sha256":"cd"}}` + "\n",
		"\n\n",
	} {
		f.Add([]byte(seed))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		dir := t.TempDir()
		path := filepath.Join(dir, JournalName)
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		j, err := openJournal(dir, true)
		if err != nil {
			t.Fatalf("openJournal: %v", err)
		}
		defer j.close()
		kept, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.HasPrefix(data, kept) || (len(kept) > 0 && kept[len(kept)-1] != '\n') {
			t.Fatalf("kept %q of %q: not a prefix of whole lines", kept, data)
		}
		for rel, e := range j.prev {
			if sh, ok := j.reuse(rel, e.Shard.SHA256, e.Shard.Bytes); ok {
				t.Fatalf("reused %q (%+v) with no shard on disk", rel, sh)
			}
			if c, ok := j.candidate(rel, e.Writer); ok {
				t.Fatalf("kept %q (%+v) for comparing batches with no shard on disk", rel, c)
			}
		}
	})
}

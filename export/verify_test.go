package export

import (
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestVerifyCatchesDamage damages a sound dataset in one way per case and checks
// that Verify names the damage.
func TestVerifyCatchesDamage(t *testing.T) {
	files := synthFiles(30)
	cases := []struct {
		name   string
		damage func(t *testing.T, dir string, m *Manifest)
		want   string
	}{
		{"flipped byte", func(t *testing.T, dir string, m *Manifest) {
			p := filepath.Join(dir, m.Shards[1].Path)
			data, _ := os.ReadFile(p)
			data[len(data)/2] ^= 0x01
			os.WriteFile(p, data, 0o644)
		}, "sha256"},
		{"truncated shard", func(t *testing.T, dir string, m *Manifest) {
			p := filepath.Join(dir, m.Shards[0].Path)
			data, _ := os.ReadFile(p)
			os.WriteFile(p, data[:len(data)-9], 0o644)
		}, "size"},
		{"missing shard", func(t *testing.T, dir string, m *Manifest) {
			os.Remove(filepath.Join(dir, m.Shards[2].Path))
		}, "no such file"},
		{"stray shard", func(t *testing.T, dir string, m *Manifest) {
			data, _ := os.ReadFile(filepath.Join(dir, m.Shards[0].Path))
			os.WriteFile(filepath.Join(dir, "train", "train-999999.parquet"), data, 0o644)
		}, "not listed"},
		{"leftover temporary", func(t *testing.T, dir string, m *Manifest) {
			os.WriteFile(filepath.Join(dir, "train", "train-000009.parquet"+TempSuffix), []byte("x"), 0o644)
		}, "temporary"},
		{"totals edited", func(t *testing.T, dir string, m *Manifest) {
			m.Totals.Windows++
			rewriteManifest(t, dir, m)
		}, "totals: windows"},
		{"vocabulary shrunk", func(t *testing.T, dir string, m *Manifest) {
			m.VocabSize = 10
			rewriteManifest(t, dir, m)
		}, "outside the vocabulary"},
		{"max_len lowered", func(t *testing.T, dir string, m *Manifest) {
			m.MaxLen = 8
			rewriteManifest(t, dir, m)
		}, "over max_len"},
		{"split ratios changed", func(t *testing.T, dir string, m *Manifest) {
			m.Config.Shards.Splits = Ratios{Train: 0.1, Validation: 0.1, Test: 0.8}
			m.ConfigHash = m.Config.Hash()
			rewriteManifest(t, dir, m)
		}, "by the split rule"},
		{"config edited", func(t *testing.T, dir string, m *Manifest) {
			m.Config.Shards.Compression = CompressionNone
			rewriteManifest(t, dir, m)
		}, "does not match the config"},
		{"time running backwards", func(t *testing.T, dir string, m *Manifest) {
			var rows []Row
			for _, f := range files {
				rows = append(rows, f.rows...)
			}
			r := rows[0]
			r.Time = append([]int32{}, r.Time...)
			r.Time[1], r.Time[2] = r.Time[2], r.Time[1]
			os.MkdirAll(filepath.Join(dir, r.Split), 0o755)
			rel := r.Split + "/" + r.Split + "-000100.parquet"
			sh, err := WriteShard(filepath.Join(dir, rel), []Row{r}, ShardOptions{})
			if err != nil {
				t.Fatal(err)
			}
			sh.Path = rel
			m.Shards = append(m.Shards, sh)
			rewriteManifest(t, dir, m)
		}, "before the previous token"},
		{"file listed twice", func(t *testing.T, dir string, m *Manifest) {
			m.Files = append(m.Files, m.Files[0])
			rewriteManifest(t, dir, m)
		}, "listed twice"},
		{"rows of one split written into another", func(t *testing.T, dir string, m *Manifest) {
			var rows []Row
			for _, f := range files {
				for _, r := range f.rows {
					if r.Split == SplitTrain {
						r.Split = SplitTest
						rows = append(rows, r)
					}
				}
			}
			os.MkdirAll(filepath.Join(dir, "test"), 0o755)
			sh, err := WriteShard(filepath.Join(dir, "test", "test-000100.parquet"), rows[:3], ShardOptions{})
			if err != nil {
				t.Fatal(err)
			}
			sh.Path, sh.Split = "test/test-000100.parquet", SplitTest
			m.Shards = append(m.Shards, sh)
			rewriteManifest(t, dir, m)
		}, "splits not disjoint"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			m := writeSynth(t, dir, 2, files)
			mustVerify(t, dir)
			c.damage(t, dir, m)
			probs, err := Verify(context.Background(), dir)
			if err != nil {
				t.Fatal(err)
			}
			var all []string
			for _, p := range probs {
				all = append(all, p.String())
			}
			if !strings.Contains(strings.Join(all, "\n"), c.want) {
				t.Errorf("problems %q do not mention %q", all, c.want)
			}
		})
	}
}

func rewriteManifest(t *testing.T, dir string, m *Manifest) {
	t.Helper()
	data, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, ManifestName), data, 0o644); err != nil {
		t.Fatal(err)
	}
}

func TestVerifyNoManifest(t *testing.T) {
	if _, err := Verify(context.Background(), t.TempDir()); err == nil {
		t.Error("a folder without manifest verified")
	}
}

package export

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// rowKeys lists every row of a dataset as a comparable string, sorted.
func rowKeys(t *testing.T, dir string, m *Manifest) []string {
	t.Helper()
	var keys []string
	for _, sh := range m.Shards {
		err := readRows(filepath.Join(dir, filepath.FromSlash(sh.Path)), func(rows []Row) error {
			for _, r := range rows {
				keys = append(keys, fmt.Sprintf("%s|%s|%s|%s|%s|%d|%d|%g|%v|%v|%v|%v",
					r.Piece, r.Dataset, r.Source, r.ContentHash, r.Split, r.Window, r.Transpose, r.Stretch, r.Tokens, r.Time, r.Pitch, r.Inst))
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
	}
	slices.Sort(keys)
	return keys
}

func TestMergeEqualsSingleRun(t *testing.T) {
	cfg := smallConfig()
	single := t.TempDir()
	want := runExport(t, single, cfg, Options{Workers: 2})

	base := t.TempDir()
	var dirs []string
	for i := 1; i <= 3; i++ {
		d := filepath.Join(base, fmt.Sprintf("part%d", i))
		m := runExport(t, d, cfg, Options{Workers: 2, Part: Part{Index: i, Count: 3}})
		if m.Part == nil || *m.Part != (Part{i, 3}) {
			t.Fatalf("part %d manifest part %v", i, m.Part)
		}
		mustVerify(t, d)
		dirs = append(dirs, d)
	}
	out := filepath.Join(base, "merged")
	// Arguments in any order.
	got, err := Merge(context.Background(), []string{dirs[2], dirs[0], dirs[1]}, MergeOptions{Out: out})
	if err != nil {
		t.Fatal(err)
	}
	mustVerify(t, out)
	if !slices.Equal(rowKeys(t, out, got), rowKeys(t, single, want)) {
		t.Error("merged rows differ from a single run's rows")
	}
	if !slices.Equal(got.Files, want.Files) {
		t.Errorf("merged files differ:\n%v\nwant\n%v", got.Files, want.Files)
	}
	if !jsonEqual(got.Coverage, want.Coverage) {
		t.Errorf("merged coverage %s, want %s", got.Coverage, want.Coverage)
	}
	g, w := got.Totals, want.Totals
	if g.Windows != w.Windows || g.Tokens != w.Tokens || g.Pieces != w.Pieces || g.Files != w.Files || g.FilesSkipped != w.FilesSkipped {
		t.Errorf("merged totals %+v, want %+v", g, w)
	}

	t.Run("interrupted and rerun", func(t *testing.T) {
		dir := filepath.Join(t.TempDir(), "m")
		ctx, cancel := context.WithCancel(context.Background())
		_, err := Merge(ctx, dirs, MergeOptions{Out: dir, Progress: func(p Progress) {
			if p.Shards == 2 {
				cancel()
			}
		}})
		if err == nil {
			t.Fatal("merge cancelled after two shards succeeded")
		}
		if _, err := ReadManifest(dir); err == nil {
			t.Fatal("an interrupted merge left a manifest")
		}
		if _, err := Merge(context.Background(), dirs, MergeOptions{Out: dir}); err != nil {
			t.Fatal(err)
		}
		mustVerify(t, dir)
		if d := diffTrees(treeHashes(t, out), treeHashes(t, dir)); len(d) > 0 {
			t.Errorf("rerun merge differs from an uninterrupted one: %v", d)
		}
	})

	t.Run("piece in two parts", func(t *testing.T) {
		// Part 1 again, relabelled as part 2: every piece of it is then in two parts.
		fake := filepath.Join(t.TempDir(), "fake2")
		m, err := ReadManifest(dirs[0])
		if err != nil {
			t.Fatal(err)
		}
		for i, sh := range m.Shards {
			data, err := os.ReadFile(filepath.Join(dirs[0], filepath.FromSlash(sh.Path)))
			if err != nil {
				t.Fatal(err)
			}
			sh.Path = strings.Replace(sh.Path, "-p1-", "-p2-", 1)
			os.MkdirAll(filepath.Join(fake, sh.Split), 0o755)
			os.WriteFile(filepath.Join(fake, filepath.FromSlash(sh.Path)), data, 0o644)
			m.Shards[i] = sh
		}
		m.Part.Index = 2
		rewriteManifest(t, fake, m)
		_, err = Merge(context.Background(), []string{dirs[0], fake, dirs[2]}, MergeOptions{Out: filepath.Join(t.TempDir(), "m")})
		if err == nil || !strings.Contains(err.Error(), "in part 1 and part 2") {
			t.Errorf("err %v, want a piece in part 1 and part 2", err)
		}
	})

	t.Run("refuses", func(t *testing.T) {
		cases := []struct {
			name string
			dirs []string
			want string
		}{
			{"missing part", dirs[:2], "2 part folders"},
			{"same part twice", []string{dirs[0], dirs[0], dirs[1]}, "both part"},
			{"a whole dataset", []string{single}, "not a part"},
		}
		for _, c := range cases {
			_, err := Merge(context.Background(), c.dirs, MergeOptions{Out: filepath.Join(t.TempDir(), "m")})
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("%s: err %v, want %q", c.name, err, c.want)
			}
		}
	})
}

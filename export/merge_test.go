package export

import (
	"context"
	"fmt"
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

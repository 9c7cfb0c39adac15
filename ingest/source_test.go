package ingest

import (
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"sort"
	"strings"
	"testing"
)

func TestParseSource(t *testing.T) {
	dir := t.TempDir()
	odd := filepath.Join(dir, "a=b")
	os.Mkdir(odd, 0o755)
	tests := []struct {
		arg  string
		want Source
	}{
		{"corpus", Source{Path: "corpus"}},
		{"train=data/x.zip", Source{Path: "data/x.zip", Dataset: "train"}},
		{"dir/a=b", Source{Path: "dir/a=b"}}, // a separator before "=": a path
		{"=x", Source{Path: "=x"}},
		{"x=", Source{Path: "x="}},
		{odd, Source{Path: odd}}, // an existing path wins
	}
	for _, tt := range tests {
		if got := ParseSource(tt.arg); got != tt.want {
			t.Errorf("ParseSource(%q) = %+v, want %+v", tt.arg, got, tt.want)
		}
	}
}

func TestDatasetName(t *testing.T) {
	tests := []struct {
		src  Source
		want string
	}{
		{Source{Path: "/data/lakh/"}, "lakh"},
		{Source{Path: "x/Bach.ZIP"}, "Bach"},
		{Source{Path: "x/set.tar.gz"}, "set"},
		{Source{Path: "x/set.tgz"}, "set"},
		{Source{Path: "x/set.tar"}, "set"},
		{Source{Path: "list.txt"}, "list"},
		{Source{Path: "song.mid.gz"}, "song"},
		{Source{Path: "song.midi"}, "song"},
		{Source{Path: "x/set.tar.gz", Dataset: "named"}, "named"},
	}
	for _, tt := range tests {
		if got := tt.src.DatasetName(); got != tt.want {
			t.Errorf("%+v.DatasetName() = %q, want %q", tt.src, got, tt.want)
		}
	}
}

func TestIsMIDIName(t *testing.T) {
	for name, want := range map[string]bool{
		"a.mid": true, "a.MID": true, "a.Midi": true, "a.smf": true, "a.rmi": true, "a.mid.gz": true, "a.MIDI.GZ": true,
		"a.kar": false, "a.gz": false, "mid": false, ".mid": false, "a.mid.zip": false, "a.txt": false,
	} {
		if got := isMIDIName(name); got != want {
			t.Errorf("isMIDIName(%q) = %v, want %v", name, got, want)
		}
	}
}

// TestFolderSymlinkLoop: a link back to an ancestor folder does not loop, and a link to
// a file is read as that file.
func TestFolderSymlinkLoop(t *testing.T) {
	root := filepath.Join(t.TempDir(), "loop")
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	fxWrite(t, root, map[string][]byte{"a/x.mid": tune, "b.mid": fxSMF(t, 96, false, fxOther(96))})
	if err := os.Symlink("..", filepath.Join(root, "a", "up")); err != nil {
		t.Skipf("no symlinks here: %v", err)
	}
	os.Symlink("a", filepath.Join(root, "c"))
	os.Symlink("b.mid", filepath.Join(root, "d.mid"))
	os.Symlink("missing.mid", filepath.Join(root, "e.mid"))
	got := scanAll(t, []Source{{Path: root}}, DefaultOptions())
	var paths []string
	for _, r := range got {
		paths = append(paths, r.Record.Path)
	}
	// The real folder is walked first; the loop "a/up" leads back to root, already visited;
	// "c" is a second name for a, already visited.
	want := []string{"a/x.mid", "b.mid", "d.mid", "e.mid"}
	if !reflect.DeepEqual(paths, want) {
		t.Errorf("paths %v, want %v", paths, want)
	}
	if got[2].Record.DuplicateKind != DupExact || got[3].Record.Status != StatusSkipped {
		t.Errorf("link outcomes: %v", outcomes(got))
	}
}

// TestFolderOrder: the walk, which emits folder by folder, gives the paths in the
// order of a plain byte-wise sort of the relative paths (Go's sort.Strings as the
// reference), also where a name ends in a character that sorts before '/'.
func TestFolderOrder(t *testing.T) {
	root := t.TempDir()
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	rels := []string{
		"b.mid", "b/x.mid", "b!/y.mid", "b-c.mid", "b/c/d.mid", "b/c.mid", "b/c-d/e.mid", "a b/z.mid",
		"a.mid", "a/a.mid", "A/q.mid", "z/y/x/w.mid", "z/y.mid", "z.mid", "Zz.mid", "~.mid", "b0/k.mid",
	}
	files := map[string][]byte{}
	for i, r := range rels {
		// distinct tunes, so that no file is a duplicate of another
		files[r] = fxSMF(t, 96, false, fxTune(96, uint8(i+1)))
	}
	files["b/c/notes.txt"] = tune // not MIDI: left out
	fxWrite(t, root, files)
	var got []string
	for _, r := range scanAll(t, []Source{{Path: root}}, DefaultOptions()) {
		got = append(got, r.Record.Path)
	}
	want := slices.Clone(rels)
	sort.Strings(want)
	if !reflect.DeepEqual(got, want) {
		t.Errorf("paths\n%q\nwant\n%q", got, want)
	}
}

// TestFolderUnreadable: a subfolder that cannot be opened is an entry of its own at
// its name's place in the order, and the walk goes on.
func TestFolderUnreadable(t *testing.T) {
	root := t.TempDir()
	fxWrite(t, root, map[string][]byte{
		"a.mid":      fxSMF(t, 96, false, fxTune(96, 1)),
		"b/x.mid":    fxSMF(t, 96, false, fxTune(96, 2)),
		"b.mid":      fxSMF(t, 96, false, fxTune(96, 3)),
		"c/deep.mid": fxSMF(t, 96, false, fxTune(96, 4)),
	})
	locked := filepath.Join(root, "b")
	if err := os.Chmod(locked, 0); err != nil {
		t.Skip(err)
	}
	defer os.Chmod(locked, 0o755)
	if f, err := os.Open(locked); err == nil {
		f.Close()
		t.Skip("a folder without permissions can still be read here (running as root)")
	}
	var paths []string
	for _, r := range scanAll(t, []Source{{Path: root}}, DefaultOptions()) {
		paths = append(paths, r.Record.Path)
		if r.Record.Path == "b" && (r.Record.Status != StatusSkipped || !strings.Contains(r.Record.Reason, "permission denied")) {
			t.Errorf("the locked folder: %s %q", r.Record.Status, r.Record.Reason)
		}
	}
	if want := []string{"a.mid", "b", "b.mid", "c/deep.mid"}; !reflect.DeepEqual(paths, want) {
		t.Errorf("paths %q, want %q", paths, want)
	}
}

func TestListSource(t *testing.T) {
	dir := t.TempDir()
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	fxWrite(t, dir, map[string][]byte{"m/one.mid": tune, "m/two.dat": fxSMF(t, 96, false, fxOther(96))})
	abs := filepath.Join(dir, "m", "one.mid")
	list := "# corpus list\nm/two.dat\n\n  m/one.mid  \nm/gone.mid\n" + abs + "\n"
	fxWrite(t, dir, map[string][]byte{"files.lst": []byte(list)})
	got := scanAll(t, []Source{{Path: filepath.Join(dir, "files.lst")}}, DefaultOptions())
	want := []outcome{
		{abs, StatusOK, "", "", ""},
		{"m/gone.mid", StatusSkipped, "no such file or directory", "", ""},
		{"m/one.mid", StatusDuplicate, "", "files/" + abs, DupExact},
		{"m/two.dat", StatusOK, "", "", ""}, // listed, so read whatever its name
	}
	if g := outcomes(got); !reflect.DeepEqual(g, want) {
		t.Errorf("got %s\nwant %s", fmtOutcomes(g), fmtOutcomes(want))
	}

	// The same list as a Windows editor saves it: a byte-order mark, CR LF line ends.
	crlf := "\ufeff" + strings.ReplaceAll(list, "\n", "\r\n")
	fxWrite(t, dir, map[string][]byte{"files.lst": []byte(crlf)})
	got = scanAll(t, []Source{{Path: filepath.Join(dir, "files.lst")}}, DefaultOptions())
	if g := outcomes(got); !reflect.DeepEqual(g, want) {
		t.Errorf("BOM and CR LF: got %s\nwant %s", fmtOutcomes(g), fmtOutcomes(want))
	}
}

func TestSingleFileSource(t *testing.T) {
	dir := t.TempDir()
	fxWrite(t, dir, map[string][]byte{"Song.MID.gz": fxGzip(t, fxSMF(t, 96, false, fxTune(96, 0)))})
	got := scanAll(t, []Source{{Path: filepath.Join(dir, "Song.MID.gz")}}, DefaultOptions())
	if len(got) != 1 || got[0].Record.Dataset != "Song" || got[0].Record.Path != "Song.MID.gz" || got[0].Record.Status != StatusOK {
		t.Errorf("got %+v", got[0].Record)
	}
}

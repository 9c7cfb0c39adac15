package ingest

import (
	"os"
	"path/filepath"
	"reflect"
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
}

func TestSingleFileSource(t *testing.T) {
	dir := t.TempDir()
	fxWrite(t, dir, map[string][]byte{"Song.MID.gz": fxGzip(t, fxSMF(t, 96, false, fxTune(96, 0)))})
	got := scanAll(t, []Source{{Path: filepath.Join(dir, "Song.MID.gz")}}, DefaultOptions())
	if len(got) != 1 || got[0].Record.Dataset != "Song" || got[0].Record.Path != "Song.MID.gz" || got[0].Record.Status != StatusOK {
		t.Errorf("got %+v", got[0].Record)
	}
}

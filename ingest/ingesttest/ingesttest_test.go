package ingesttest_test

import (
	"archive/tar"
	"archive/zip"
	"bytes"
	"compress/gzip"
	"io"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"

	"gitlab.com/gomidi/midi/v2/smf"

	"github.com/relshard/relshard/ingest/ingesttest"
)

// readNotes reads data back with gomidi's reader, the independent reference here,
// pairing each note end with the earliest open note of its channel and key. It fails
// the test if a note-on comes before a note-off at one tick.
func readNotes(t *testing.T, data []byte) (*smf.SMF, [][]ingesttest.Note) {
	t.Helper()
	s, err := smf.ReadFrom(bytes.NewReader(data))
	if err != nil {
		t.Fatalf("gomidi smf.ReadFrom: %v", err)
	}
	var tracks [][]ingesttest.Note
	for i, tr := range s.Tracks {
		type voice struct{ ch, key uint8 }
		open := map[voice][]ingesttest.Note{}
		var notes []ingesttest.Note
		var tick uint32
		onAt := ^uint32(0) // the tick of the last note-on, if any
		for _, ev := range tr {
			tick += ev.Delta
			var ch, key, vel uint8
			switch {
			case ev.Message.GetNoteStart(&ch, &key, &vel):
				open[voice{ch, key}] = append(open[voice{ch, key}], ingesttest.Note{Start: tick, Key: key, Vel: vel, Channel: ch})
				onAt = tick
			case ev.Message.GetNoteEnd(&ch, &key):
				if onAt == tick {
					t.Errorf("track %d: note-off at tick %d after a note-on at that tick", i, tick)
				}
				q := open[voice{ch, key}]
				if len(q) == 0 {
					t.Fatalf("track %d: note-off of channel %d key %d at tick %d with no note open", i, ch, key, tick)
				}
				n := q[0]
				open[voice{ch, key}] = q[1:]
				n.Dur = tick - n.Start
				notes = append(notes, n)
			}
		}
		tracks = append(tracks, notes)
	}
	return s, tracks
}

// byStart orders notes as a fixture lists them: by start, then key.
func byStart(a, b ingesttest.Note) int {
	if a.Start != b.Start {
		return int(a.Start) - int(b.Start)
	}
	return int(a.Key) - int(b.Key)
}

func TestSMF(t *testing.T) {
	tune := []ingesttest.Note{{0, 96, 60, 90, 0}, {96, 48, 64, 80, 0}, {144, 48, 67, 70, 0}}
	drums := []ingesttest.Note{{0, 24, 36, 100, 9}, {0, 24, 42, 100, 9}, {48, 24, 38, 100, 9}}
	// The same key struck again as it ends, and notes of two channels overlapping.
	repeated := []ingesttest.Note{{0, 96, 60, 90, 0}, {96, 96, 60, 91, 0}, {48, 96, 60, 92, 1}}
	tests := []struct {
		name       string
		ppq        uint16
		format2    bool
		tracks     [][]ingesttest.Note
		wantFormat uint16
	}{
		{"one track", 96, false, [][]ingesttest.Note{tune}, 0},
		{"repeated key", 480, false, [][]ingesttest.Note{repeated}, 0},
		{"several tracks", 384, false, [][]ingesttest.Note{tune, drums}, 1},
		{"format 2", 120, true, [][]ingesttest.Note{tune, drums}, 2},
		{"format 2 one track", 120, true, [][]ingesttest.Note{drums}, 2},
		{"no notes", 96, false, [][]ingesttest.Note{nil}, 0},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			s, got := readNotes(t, ingesttest.SMF(t, tt.ppq, tt.format2, tt.tracks...))
			if s.Format() != tt.wantFormat || s.TimeFormat != smf.MetricTicks(tt.ppq) {
				t.Errorf("format %d, time format %v; want format %d at %d PPQ", s.Format(), s.TimeFormat, tt.wantFormat, tt.ppq)
			}
			var want [][]ingesttest.Note
			for i, tr := range tt.tracks {
				want = append(want, slices.SortedStableFunc(slices.Values(tr), byStart))
				if i < len(got) {
					slices.SortStableFunc(got[i], byStart)
				}
			}
			if !reflect.DeepEqual(got, want) {
				t.Errorf("gomidi reads back\n%v\nwant\n%v", got, want)
			}
		})
	}
}

func TestGzip(t *testing.T) {
	for _, data := range [][]byte{nil, []byte("MThd"), bytes.Repeat([]byte{0x90, 60, 100}, 1000)} {
		zr, err := gzip.NewReader(bytes.NewReader(ingesttest.Gzip(t, data)))
		if err != nil {
			t.Fatalf("gzip.NewReader: %v", err)
		}
		got, err := io.ReadAll(zr)
		if err != nil {
			t.Fatalf("gunzip: %v", err)
		}
		if !bytes.Equal(got, data) {
			t.Errorf("gunzip gives %d bytes, want the %d written", len(got), len(data))
		}
	}
}

func TestZip(t *testing.T) {
	want := []ingesttest.ZipEntry{
		{Name: "a.mid", Data: []byte("MThd")},
		{Name: "sub/b.mid", Data: bytes.Repeat([]byte("x"), 5000)},
		{Name: "link.mid", Data: []byte("a.mid"), Mode: os.ModeSymlink | 0o777},
		{Name: "dir/", Mode: os.ModeDir | 0o755},
		{Name: "empty.mid"},
	}
	data := ingesttest.Zip(t, want...)
	zr, err := zip.NewReader(bytes.NewReader(data), int64(len(data)))
	if err != nil {
		t.Fatalf("zip.NewReader: %v", err)
	}
	var got []ingesttest.ZipEntry
	for _, f := range zr.File {
		wantMethod := zip.Deflate
		if strings.HasSuffix(f.Name, "/") {
			wantMethod = zip.Store // archive/zip's writer stores a folder whatever it is asked
		}
		if f.Method != wantMethod {
			t.Errorf("%s: method %d, want %d", f.Name, f.Method, wantMethod)
		}
		rc, err := f.Open()
		if err != nil {
			t.Fatalf("open %s: %v", f.Name, err)
		}
		b, err := io.ReadAll(rc)
		rc.Close()
		if err != nil {
			t.Fatalf("read %s: %v", f.Name, err)
		}
		e := ingesttest.ZipEntry{Name: f.Name, Data: b}
		// An entry written without a mode reads back as a plain file (0666, from
		// MS-DOS attributes of zero); compare the mode only where one was set.
		if f.CreatorVersion>>8 != 0 {
			e.Mode = f.Mode()
		}
		got = append(got, e)
	}
	if len(got) != len(want) {
		t.Fatalf("zip reads back %d entries, want %d", len(got), len(want))
	}
	for i := range want {
		g, w := got[i], want[i]
		if g.Name != w.Name || !bytes.Equal(g.Data, w.Data) || g.Mode != w.Mode {
			t.Errorf("entry %d: got %s (%d bytes, mode %v), want %s (%d bytes, mode %v)",
				i, g.Name, len(g.Data), g.Mode, w.Name, len(w.Data), w.Mode)
		}
	}
}

func TestTar(t *testing.T) {
	entries := []ingesttest.TarEntry{
		{Name: "a.mid", Data: []byte("MThd")},
		{Name: "sub/b.mid", Data: bytes.Repeat([]byte("x"), 5000)},
		{Name: "sym.mid", Type: tar.TypeSymlink, Link: "a.mid"},
		{Name: "hard.mid", Type: tar.TypeLink, Link: "a.mid"},
		{Name: "dir/", Type: tar.TypeDir},
		{Name: "empty.mid"},
	}
	// A regular entry reads back with its type flag set.
	var want []ingesttest.TarEntry
	for _, e := range entries {
		if e.Type == 0 {
			e.Type = tar.TypeReg
		}
		want = append(want, e)
	}
	for _, gz := range []bool{false, true} {
		var r io.Reader = bytes.NewReader(ingesttest.Tar(t, gz, entries...))
		if gz {
			zr, err := gzip.NewReader(r)
			if err != nil {
				t.Fatalf("gzip.NewReader: %v", err)
			}
			r = zr
		}
		tr := tar.NewReader(r)
		var got []ingesttest.TarEntry
		for {
			h, err := tr.Next()
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatalf("gz %v: tar Next: %v", gz, err)
			}
			b, err := io.ReadAll(tr)
			if err != nil {
				t.Fatalf("gz %v: read %s: %v", gz, h.Name, err)
			}
			if len(b) == 0 {
				b = nil
			}
			got = append(got, ingesttest.TarEntry{Name: h.Name, Data: b, Type: h.Typeflag, Link: h.Linkname})
		}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("gz %v: tar reads back\n%+v\nwant\n%+v", gz, got, want)
		}
	}
}

func TestWriteFiles(t *testing.T) {
	dir := t.TempDir()
	want := map[string][]byte{"a.mid": []byte("MThd"), "sub/deeper/b.mid.gz": []byte("x"), "empty.smf": {}}
	ingesttest.WriteFiles(t, dir, want)
	got := map[string][]byte{}
	err := filepath.WalkDir(dir, func(p string, d os.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, err := os.ReadFile(p)
		rel, _ := filepath.Rel(dir, p)
		got[filepath.ToSlash(rel)] = b
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("folder holds %q, want %q", got, want)
	}
}

package ingesttest

import (
	"archive/tar"
	"archive/zip"
	"bytes"
	"compress/gzip"
	"os"
	"path/filepath"
	"sort"
	"testing"

	"gitlab.com/gomidi/midi/v2"
	"gitlab.com/gomidi/midi/v2/smf"
)

// Note is one note of a fixture track: its start and duration in ticks, its key,
// velocity and channel (0 to 15).
type Note struct {
	Start, Dur        uint32
	Key, Vel, Channel uint8
}

// SMF writes the tracks as a Standard MIDI File at ppq ticks per quarter note, with
// gomidi: format 0 for one track, format 1 for several, format 2 when format2 is set.
// Each note becomes a note-on and a note-off; at one tick the note-offs come first, so
// that a key struck again as another ends pairs the way the notes were written.
func SMF(t testing.TB, ppq uint16, format2 bool, tracks ...[]Note) []byte {
	t.Helper()
	s := smf.New()
	if len(tracks) > 1 {
		s = smf.NewSMF1()
	}
	if format2 {
		s = smf.NewSMF2()
	}
	s.TimeFormat = smf.MetricTicks(ppq)
	for _, notes := range tracks {
		if err := s.Add(track(notes)); err != nil {
			t.Fatalf("ingesttest: add track: %v", err)
		}
	}
	var buf bytes.Buffer
	if _, err := s.WriteTo(&buf); err != nil {
		t.Fatalf("ingesttest: write SMF: %v", err)
	}
	return buf.Bytes()
}

// track turns notes into a closed gomidi track of note-ons and note-offs in time order.
func track(notes []Note) smf.Track {
	type event struct {
		tick uint32
		off  bool
		msg  midi.Message
	}
	evs := make([]event, 0, 2*len(notes))
	for _, n := range notes {
		evs = append(evs,
			event{n.Start, false, midi.NoteOn(n.Channel, n.Key, n.Vel)},
			event{n.Start + n.Dur, true, midi.NoteOff(n.Channel, n.Key)})
	}
	sort.SliceStable(evs, func(i, j int) bool {
		if evs[i].tick != evs[j].tick {
			return evs[i].tick < evs[j].tick
		}
		return evs[i].off && !evs[j].off
	})
	var tr smf.Track
	var last uint32
	for _, e := range evs {
		tr.Add(e.tick-last, e.msg)
		last = e.tick
	}
	tr.Close(0)
	return tr
}

// Gzip compresses data as one gzip member at the default level.
func Gzip(t testing.TB, data []byte) []byte {
	t.Helper()
	var buf bytes.Buffer
	zw := gzip.NewWriter(&buf)
	if _, err := zw.Write(data); err != nil {
		t.Fatalf("ingesttest: gzip: %v", err)
	}
	if err := zw.Close(); err != nil {
		t.Fatalf("ingesttest: gzip: %v", err)
	}
	return buf.Bytes()
}

// ZipEntry is one entry of a zip archive. A Mode of 0 leaves the mode unset, which
// readers take for a regular file; os.ModeSymlink or os.ModeDir make other kinds of
// entry, with Data as a link's target.
type ZipEntry struct {
	Name string
	Data []byte
	Mode os.FileMode
}

// Zip writes the entries, in order and deflated, as a zip archive.
func Zip(t testing.TB, entries ...ZipEntry) []byte {
	t.Helper()
	var buf bytes.Buffer
	zw := zip.NewWriter(&buf)
	for _, e := range entries {
		h := &zip.FileHeader{Name: e.Name, Method: zip.Deflate}
		if e.Mode != 0 {
			h.SetMode(e.Mode)
		}
		w, err := zw.CreateHeader(h)
		if err != nil {
			t.Fatalf("ingesttest: zip entry %q: %v", e.Name, err)
		}
		if _, err := w.Write(e.Data); err != nil {
			t.Fatalf("ingesttest: zip entry %q: %v", e.Name, err)
		}
	}
	if err := zw.Close(); err != nil {
		t.Fatalf("ingesttest: zip: %v", err)
	}
	return buf.Bytes()
}

// TarEntry is one entry of a tar archive. A Type of 0 is a regular file holding Data;
// any other type flag (tar.TypeSymlink, tar.TypeLink, tar.TypeDir, ...) writes a
// header only, with Link as a link's target.
type TarEntry struct {
	Name string
	Data []byte
	Type byte
	Link string
}

// Tar writes the entries, in order, as a PAX tar archive, gzip-compressed when gz is
// set.
func Tar(t testing.TB, gz bool, entries ...TarEntry) []byte {
	t.Helper()
	var buf bytes.Buffer
	tw := tar.NewWriter(&buf)
	for _, e := range entries {
		typ := e.Type
		if typ == 0 {
			typ = tar.TypeReg
		}
		h := &tar.Header{Name: e.Name, Typeflag: typ, Mode: 0o644, Linkname: e.Link, Format: tar.FormatPAX}
		if typ == tar.TypeReg {
			h.Size = int64(len(e.Data))
		}
		if err := tw.WriteHeader(h); err != nil {
			t.Fatalf("ingesttest: tar entry %q: %v", e.Name, err)
		}
		if typ == tar.TypeReg {
			if _, err := tw.Write(e.Data); err != nil {
				t.Fatalf("ingesttest: tar entry %q: %v", e.Name, err)
			}
		}
	}
	if err := tw.Close(); err != nil {
		t.Fatalf("ingesttest: tar: %v", err)
	}
	if gz {
		return Gzip(t, buf.Bytes())
	}
	return buf.Bytes()
}

// WriteFiles writes files, each a slash-separated path relative to dir and its
// contents, creating the folders they need.
func WriteFiles(t testing.TB, dir string, files map[string][]byte) {
	t.Helper()
	for name, data := range files {
		p := filepath.Join(dir, filepath.FromSlash(name))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatalf("ingesttest: %v", err)
		}
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatalf("ingesttest: %v", err)
		}
	}
}

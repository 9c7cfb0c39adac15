package export

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"maps"
	"os"
	"slices"
)

// entrySpool keeps the manifest's file entries in a temporary file while a run
// goes on, so that the memory of a run does not grow with the number of input
// files. Each entry is stored as it will appear in the manifest's files array
// (indented, with its separator), so writing the manifest copies the file.
type entrySpool struct {
	f     *os.File
	name  string // set when the file could not be unlinked while open
	w     *bufio.Writer
	n     int
	tally fileTally
}

// Indentation of a files element inside the manifest (MarshalIndent with "  ").
const (
	entryPrefix = "    "
	entryIndent = "  "
)

// newEntrySpool creates the spool file in dir, unlinked at once where the
// system allows (named like a spill file otherwise, so a rerun removes it).
func newEntrySpool(dir string) (*entrySpool, error) {
	f, named, err := createScratch(dir)
	if err != nil {
		return nil, fmt.Errorf("file entry spool: %w", err)
	}
	return &entrySpool{f: f, name: named, w: bufio.NewWriterSize(f, 64<<10)}, nil
}

// add appends one file entry.
func (s *entrySpool) add(e FileEntry) error {
	data, err := json.MarshalIndent(e, entryPrefix, entryIndent)
	if err != nil {
		return fmt.Errorf("file entry %s: %w", e.Source, err)
	}
	if s.n > 0 {
		s.w.WriteByte(',')
	}
	s.w.WriteString("\n" + entryPrefix)
	if _, err := s.w.Write(data); err != nil {
		return fmt.Errorf("file entry spool: %w", err)
	}
	s.n++
	s.tally.add(e)
	return nil
}

// contents returns a reader of the stored array elements, from the start.
func (s *entrySpool) contents() (io.Reader, error) {
	if err := s.w.Flush(); err != nil {
		return nil, fmt.Errorf("file entry spool: %w", err)
	}
	if _, err := s.f.Seek(0, io.SeekStart); err != nil {
		return nil, fmt.Errorf("file entry spool: %w", err)
	}
	return bufio.NewReaderSize(s.f, 64<<10), nil
}

// close closes and removes the spool file.
func (s *entrySpool) close() {
	s.f.Close()
	if s.name != "" {
		os.Remove(s.name)
	}
}

// filesTail is how the manifest's JSON ends when its files array is empty.
const filesTail = "\"files\": []\n}"

// encodeSpooled returns the manifest as Encode would with Files holding the
// spooled entries, writing it to w; m.Files must be empty.
func (m *Manifest) encodeSpooled(w io.Writer, s *entrySpool) error {
	if len(m.Files) != 0 {
		return errors.New("encode manifest: files both in memory and spooled")
	}
	m.Files = []FileEntry{}
	defer func() { m.Files = nil }()
	head, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return fmt.Errorf("encode manifest: %w", err)
	}
	if !bytes.HasSuffix(head, []byte(filesTail)) {
		return errors.New("encode manifest: files is not the last field")
	}
	if s.n == 0 {
		_, err := w.Write(append(head, '\n'))
		return err
	}
	head = head[:len(head)-len("[]\n}")]
	if _, err := w.Write(append(head, '[')); err != nil {
		return err
	}
	r, err := s.contents()
	if err != nil {
		return err
	}
	if _, err := io.Copy(w, r); err != nil {
		return err
	}
	_, err = io.WriteString(w, "\n  ]\n}\n")
	return err
}

// fileTally counts file entries for Totals and FileCounts.
type fileTally struct {
	files, pieces, ok, skipped, duplicate int64
	classes                               map[string]int64 // skipped files by class
	datasets                              map[string]bool
}

func (t *fileTally) add(f FileEntry) {
	t.files++
	t.pieces += f.Pieces
	switch f.Status {
	case "ok":
		t.ok++
	case "skipped":
		t.skipped++
		if t.classes == nil {
			t.classes = map[string]int64{}
		}
		t.classes[f.Class]++
	case "duplicate":
		t.duplicate++
	}
	if !t.datasets[f.Dataset] {
		if t.datasets == nil {
			t.datasets = map[string]bool{}
		}
		t.datasets[f.Dataset] = true
	}
}

// counts returns the FileCounts of the entries added.
func (t *fileTally) counts() FileCounts {
	c := FileCounts{Skipped: map[string]int64{}}
	maps.Copy(c.Skipped, t.classes)
	c.Datasets = slices.Sorted(maps.Keys(t.datasets))
	return c
}

// FileCounts summarises the file entries of a manifest.
type FileCounts struct {
	Datasets []string         // distinct dataset names of the inputs, sorted
	Skipped  map[string]int64 // skipped files by FileEntry.Class
}

// FileCounts returns the summary of m's file entries: counted from Files, or for a
// manifest returned by Run (which leaves the entries out), kept from the run.
func (m *Manifest) FileCounts() FileCounts {
	if m.counts != nil && len(m.Files) == 0 {
		c := *m.counts
		c.Skipped = maps.Clone(c.Skipped)
		c.Datasets = slices.Clone(c.Datasets)
		return c
	}
	var t fileTally
	for _, f := range m.Files {
		t.add(f)
	}
	return t.counts()
}

// addTo adds the counts to the totals.
func (t *fileTally) addTo(tot *Totals) {
	tot.Files += t.files
	tot.Pieces += t.pieces
	tot.FilesOK += t.ok
	tot.FilesSkipped += t.skipped
	tot.FilesDuplicate += t.duplicate
}

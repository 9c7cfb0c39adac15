package export

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
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
	f, err := os.CreateTemp(dir, spillPrefix+"*"+TempSuffix)
	if err != nil {
		return nil, fmt.Errorf("file entry spool: %w", err)
	}
	s := &entrySpool{f: f, w: bufio.NewWriterSize(f, 64<<10)}
	if os.Remove(f.Name()) != nil {
		s.name = f.Name()
	}
	return s, nil
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

// entries reads every stored entry back.
func (s *entrySpool) entries() ([]FileEntry, error) {
	r, err := s.contents()
	if err != nil {
		return nil, err
	}
	files := make([]FileEntry, 0, s.n)
	dec := json.NewDecoder(io.MultiReader(bytes.NewReader([]byte("[")), r, bytes.NewReader([]byte("]"))))
	if err := dec.Decode(&files); err != nil {
		return nil, fmt.Errorf("file entry spool: %w", err)
	}
	if len(files) != s.n {
		return nil, fmt.Errorf("file entry spool: %d entries read back, %d written", len(files), s.n)
	}
	return files, nil
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

// fileTally counts file entries for Totals.
type fileTally struct {
	files, pieces, ok, skipped, duplicate int64
}

func (t *fileTally) add(f FileEntry) {
	t.files++
	t.pieces += f.Pieces
	switch f.Status {
	case "ok":
		t.ok++
	case "skipped":
		t.skipped++
	case "duplicate":
		t.duplicate++
	}
}

// addTo adds the counts to the totals.
func (t *fileTally) addTo(tot *Totals) {
	tot.Files += t.files
	tot.Pieces += t.pieces
	tot.FilesOK += t.ok
	tot.FilesSkipped += t.skipped
	tot.FilesDuplicate += t.duplicate
}

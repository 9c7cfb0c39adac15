package ingest

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"unicode/utf8"
)

// nameStore keeps the "dataset/path" names of the files that own a content hash,
// which duplicate reasons quote. A corpus of a million files holds some 100 MB of
// them, so past the first 256 KiB they go to an unlinked temporary file; when no
// temporary file can be made, or writing to it fails, they stay in memory. Each name
// is known by a reference (its place and length, see nameRef) that the duplicate
// indexes hold, so the store itself keeps nothing per name. Names are read back only
// for duplicates. A small scan makes no file at all (creating one costs about half a
// millisecond here).
type nameStore struct {
	// spillAt is the size of the names held in buf beyond which they move to a file;
	// after a failed spill, never.
	spillAt int
	buf     []byte   // the names kept in memory
	f       *os.File // the names once spilled
	w       *bufio.Writer
	size    int64 // bytes of names in f
	err     error // first write error to f: the names from then on are kept in buf
}

// spillNames is the default nameStore.spillAt.
const spillNames = 256 << 10

// A name reference packs where a name is: bit 63 set for the file, clear for
// memory; the offset above nameLenBits; the length below. Names are cut to
// maxStoredName bytes (a path that long is not a real one).
const (
	nameInFile    = 1 << 63
	nameLenBits   = 20
	maxStoredName = 1<<nameLenBits - 1
)

// newNameStore makes an empty store that spills at spillNames bytes (tests change
// namesSpillAt to put the names of a scan on disk).
func newNameStore() *nameStore { return &nameStore{spillAt: namesSpillAt} }

var namesSpillAt = spillNames

// spill starts the temporary file for the names added from now on; on failure they
// go on into buf for the rest of the scan.
func (s *nameStore) spill() {
	s.spillAt = math.MaxInt // one attempt
	f, err := newScratchFile("relshard-names-*")
	if err != nil {
		return
	}
	// the references handed out so far point into buf, which stays as it is
	s.f, s.w = f, bufio.NewWriterSize(f, 32<<10)
}

// add stores a name and returns its reference.
func (s *nameStore) add(name string) uint64 {
	if len(name) > maxStoredName {
		name = cutName(name)
	}
	if s.f == nil && s.err == nil && len(s.buf)+len(name) > s.spillAt {
		s.spill()
	}
	if s.f != nil && s.err == nil {
		_, s.err = s.w.WriteString(name)
		if s.err == nil {
			ref := nameInFile | uint64(s.size)<<nameLenBits | uint64(len(name))
			s.size += int64(len(name))
			return ref
		}
	}
	ref := uint64(len(s.buf))<<nameLenBits | uint64(len(name))
	s.buf = append(s.buf, name...)
	return ref
}

// get returns the name of a reference from add.
func (s *nameStore) get(ref uint64) string {
	n := int64(ref & maxStoredName)
	off := int64(ref&^nameInFile) >> nameLenBits
	if ref&nameInFile == 0 {
		return string(s.buf[off : off+n])
	}
	if err := s.w.Flush(); err != nil {
		return fmt.Sprintf("(name lost: %v)", err)
	}
	b := make([]byte, n)
	if _, err := s.f.ReadAt(b, off); err != nil {
		return fmt.Sprintf("(name lost: %v)", err)
	}
	return string(b)
}

// cutName shortens a name to at most maxStoredName bytes, at a character boundary,
// marking the cut with an ellipsis.
func cutName(name string) string {
	const mark = "…"
	end := maxStoredName - len(mark)
	for end > 0 && !utf8.RuneStart(name[end]) {
		end--
	}
	return name[:end] + mark
}

// close releases the temporary file.
func (s *nameStore) close() {
	if s.f != nil {
		s.f.Close()
	}
}

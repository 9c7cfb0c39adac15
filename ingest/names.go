package ingest

import (
	"bufio"
	"fmt"
	"math"
	"os"
)

// nameStore keeps the "dataset/path" names of the files that own a content hash,
// which duplicate reasons quote. A corpus of a million files holds some 100 MB of
// them, so past the first 256 KiB they go to an unlinked temporary file and
// memory keeps 8 bytes a name; when no temporary file can be made, they stay in
// memory. Names are read back only for duplicates. A small scan makes no file at
// all (creating one costs about half a millisecond here).
type nameStore struct {
	// spillAt is the size of the names held in buf beyond which they move to a file;
	// after a failed spill, never.
	spillAt int
	buf     []byte   // the names while f is nil
	f       *os.File // the names once spilled
	w       *bufio.Writer
	size    int64   // bytes of names in buf or f
	ends    []int64 // end offset of each name in buf or f
	mem     []string
	err     error // first write error to f: the names from then on are kept in mem
}

// spillNames is the default nameStore.spillAt.
const spillNames = 256 << 10

func newNameStore() *nameStore { return &nameStore{spillAt: spillNames} }

// spill moves the names from buf to a new unlinked temporary file; on any failure
// they stay in buf for the rest of the scan.
func (s *nameStore) spill() {
	s.spillAt = math.MaxInt // one attempt
	f, err := os.CreateTemp("", "relshard-names-*")
	if err != nil {
		return
	}
	if os.Remove(f.Name()) != nil {
		// a system that cannot unlink an open file: keep the names in memory
		// rather than leave a file behind after a crash
		f.Close()
		os.Remove(f.Name())
		return
	}
	if _, err := f.Write(s.buf); err != nil {
		f.Close()
		return
	}
	s.f, s.w, s.buf = f, bufio.NewWriterSize(f, 32<<10), nil
}

// add stores a name and returns its index.
func (s *nameStore) add(name string) int32 {
	i := int32(len(s.ends) + len(s.mem))
	if s.err != nil {
		s.mem = append(s.mem, name)
		return i
	}
	if s.f == nil && len(s.buf)+len(name) > s.spillAt {
		s.spill()
	}
	if s.f == nil {
		s.buf = append(s.buf, name...)
	} else if _, err := s.w.WriteString(name); err != nil {
		s.err = err
		s.mem = append(s.mem, name)
		return i
	}
	s.size += int64(len(name))
	s.ends = append(s.ends, s.size)
	return i
}

// get returns the name of index i.
func (s *nameStore) get(i int32) string {
	if int(i) >= len(s.ends) {
		return s.mem[int(i)-len(s.ends)]
	}
	start := int64(0)
	if i > 0 {
		start = s.ends[i-1]
	}
	if s.f == nil {
		return string(s.buf[start:s.ends[i]])
	}
	if err := s.w.Flush(); err != nil {
		return fmt.Sprintf("file %d of the scan (name lost: %v)", i+1, err)
	}
	b := make([]byte, s.ends[i]-start)
	if _, err := s.f.ReadAt(b, start); err != nil {
		return fmt.Sprintf("file %d of the scan (name lost: %v)", i+1, err)
	}
	return string(b)
}

// close releases the temporary file.
func (s *nameStore) close() {
	if s.f != nil {
		s.f.Close()
	}
}

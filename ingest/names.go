package ingest

import (
	"bufio"
	"fmt"
	"os"
)

// nameStore keeps the "dataset/path" names of the files that own a content hash,
// which duplicate reasons quote. A corpus of a million files holds some 100 MB of
// them, so they go to an unlinked temporary file and memory keeps 8 bytes a name;
// when no temporary file can be made, they stay in memory. Names are read back
// only for duplicates.
type nameStore struct {
	f    *os.File // nil: names are in mem
	w    *bufio.Writer
	size int64   // bytes written to f
	ends []int64 // end offset of each name in f
	mem  []string
	err  error // first write error: the names from then on are kept in mem
}

func newNameStore() *nameStore {
	s := &nameStore{}
	f, err := os.CreateTemp("", "relshard-names-*")
	if err != nil {
		return s
	}
	if os.Remove(f.Name()) != nil {
		// a system that cannot unlink an open file: keep the names in memory
		// rather than leave a file behind after a crash
		f.Close()
		os.Remove(f.Name())
		return s
	}
	s.f, s.w = f, bufio.NewWriterSize(f, 32<<10)
	return s
}

// add stores a name and returns its index.
func (s *nameStore) add(name string) int32 {
	i := int32(len(s.ends) + len(s.mem))
	if s.f == nil || s.err != nil {
		s.mem = append(s.mem, name)
		return i
	}
	if _, err := s.w.WriteString(name); err != nil {
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
	if s.f == nil || int(i) >= len(s.ends) {
		return s.mem[int(i)-len(s.ends)]
	}
	start := int64(0)
	if i > 0 {
		start = s.ends[i-1]
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

package ingest

import (
	"bufio"
	"cmp"
	"container/heap"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
)

// nameSort sorts the names of a folder's or a path list's files, each with a small
// tag, in bounded memory. Names are gathered up to sortChunk bytes and sorted; past
// that, each full chunk goes as a sorted run to an unlinked temporary file, and
// reading merges the runs. Equal names keep the order they were added in. A folder
// of a million files (some 70 MB of names) thus needs a few megabytes; a small one
// makes no file.
type nameSort struct {
	chunk int // bytes of names in items that make a run (sortChunk)
	items []sortedName
	size  int
	runs  []*os.File
	seq   int // names added, for stable order
}

type sortedName struct {
	name string
	tag  byte
	seq  int
}

const (
	// sortChunk is the bytes of names held in memory before a run is written.
	sortChunk = 1 << 20
	// maxSortRuns is the number of runs that are merged into one before more are
	// written, so that reading never holds more files open than this.
	maxSortRuns = 64
	// runBufSize is the buffer of a run's writer and of each reader in a merge.
	runBufSize = 16 << 10
)

// newNameSort makes an empty sorter that writes runs every sortChunk bytes (tests
// change sortChunkAt to make runs of a few names).
func newNameSort() *nameSort { return &nameSort{chunk: sortChunkAt} }

var sortChunkAt = sortChunk

// add adds a name. When a run cannot be written, the names stay in memory from
// then on: nothing is lost.
func (s *nameSort) add(name string, tag byte) {
	s.items = append(s.items, sortedName{name, tag, s.seq})
	s.seq++
	s.size += len(name)
	if s.size >= s.chunk {
		if err := s.flush(); err != nil {
			s.chunk = math.MaxInt
		}
	}
}

func compareSorted(a, b sortedName) int {
	return cmp.Or(cmp.Compare(a.name, b.name), cmp.Compare(a.seq, b.seq))
}

// flush writes the items as a run; on failure they stay in memory.
func (s *nameSort) flush() error {
	if len(s.runs) == maxSortRuns {
		if err := s.collapse(); err != nil {
			return err
		}
	}
	slices.SortFunc(s.items, compareSorted)
	f, err := newScratchFile("relshard-list-*")
	if err != nil {
		return fmt.Errorf("sort names: %w", err)
	}
	w := bufio.NewWriterSize(f, min(runBufSize, s.size+len(s.items)*(2*binary.MaxVarintLen64+1)))
	for _, it := range s.items {
		writeSorted(w, it)
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return fmt.Errorf("sort names: %w", err)
	}
	s.runs = append(s.runs, f)
	clear(s.items) // drop the names
	s.items, s.size = s.items[:0], 0
	return nil
}

// collapse merges every run into one.
func (s *nameSort) collapse() error {
	f, err := newScratchFile("relshard-list-*")
	if err != nil {
		return fmt.Errorf("sort names: %w", err)
	}
	w := bufio.NewWriterSize(f, runBufSize)
	err = mergeSorted(s.runs, nil, func(it sortedName) error { return writeSorted(w, it) })
	if err == nil {
		err = w.Flush()
	}
	if err != nil {
		f.Close()
		return fmt.Errorf("sort names: %w", err)
	}
	for _, r := range s.runs {
		r.Close()
	}
	s.runs = append(s.runs[:0], f)
	return nil
}

// A run's record: the name's length (uvarint), the tag, the sequence number
// (uvarint), the name.
func writeSorted(w *bufio.Writer, it sortedName) error {
	var b [2*binary.MaxVarintLen64 + 1]byte
	n := binary.PutUvarint(b[:], uint64(len(it.name)))
	b[n] = it.tag
	n++
	n += binary.PutUvarint(b[n:], uint64(it.seq))
	w.Write(b[:n])
	_, err := w.WriteString(it.name)
	return err
}

func readSorted(r *bufio.Reader) (sortedName, bool, error) {
	n, err := binary.ReadUvarint(r)
	if errors.Is(err, io.EOF) {
		return sortedName{}, false, nil
	}
	if err != nil {
		return sortedName{}, false, err
	}
	tag, err := r.ReadByte()
	if err != nil {
		return sortedName{}, false, io.ErrUnexpectedEOF
	}
	seq, err := binary.ReadUvarint(r)
	if err != nil {
		return sortedName{}, false, io.ErrUnexpectedEOF
	}
	if n > 1<<30 {
		return sortedName{}, false, errors.New("damaged run")
	}
	var name string
	if int(n) <= r.Size() {
		// the usual name, copied once out of the reader's buffer
		b, err := r.Peek(int(n))
		if err != nil {
			return sortedName{}, false, io.ErrUnexpectedEOF
		}
		name = string(b)
		r.Discard(int(n))
	} else {
		b := make([]byte, n)
		if _, err := io.ReadFull(r, b); err != nil {
			return sortedName{}, false, io.ErrUnexpectedEOF
		}
		name = string(b)
	}
	return sortedName{name, tag, int(seq)}, true, nil
}

// each calls fn with every name in sorted order, and releases the runs.
func (s *nameSort) each(fn func(name string, tag byte) error) error {
	defer s.close()
	slices.SortFunc(s.items, compareSorted)
	return mergeSorted(s.runs, s.items, func(it sortedName) error { return fn(it.name, it.tag) })
}

// mergeSorted merges the runs in files and the sorted items in memory.
func mergeSorted(files []*os.File, items []sortedName, fn func(sortedName) error) error {
	h := &sortHeap{}
	add := func(src *sortSource) error {
		it, ok, err := src.next()
		if err != nil {
			return fmt.Errorf("sort names: %w", err)
		}
		if ok {
			src.head = it
			heap.Push(h, src)
		}
		return nil
	}
	for _, f := range files {
		if _, err := f.Seek(0, io.SeekStart); err != nil {
			return fmt.Errorf("sort names: %w", err)
		}
		size := int64(runBufSize)
		if fi, err := f.Stat(); err == nil {
			size = min(size, fi.Size()+16)
		}
		if err := add(&sortSource{r: bufio.NewReaderSize(f, int(size))}); err != nil {
			return err
		}
	}
	if err := add(&sortSource{items: items}); err != nil {
		return err
	}
	for h.Len() > 0 {
		src := (*h)[0]
		if err := fn(src.head); err != nil {
			return err
		}
		it, ok, err := src.next()
		if err != nil {
			return fmt.Errorf("sort names: %w", err)
		}
		if ok {
			src.head = it
			heap.Fix(h, 0)
		} else {
			heap.Pop(h)
		}
	}
	return nil
}

func (s *nameSort) close() {
	for _, r := range s.runs {
		r.Close()
	}
	s.runs, s.items = nil, nil
}

// sortSource is one run being merged, or the items in memory.
type sortSource struct {
	r     *bufio.Reader
	items []sortedName
	head  sortedName
}

func (src *sortSource) next() (sortedName, bool, error) {
	if src.r != nil {
		return readSorted(src.r)
	}
	if len(src.items) == 0 {
		return sortedName{}, false, nil
	}
	it := src.items[0]
	src.items[0] = sortedName{}
	src.items = src.items[1:]
	return it, true, nil
}

type sortHeap []*sortSource

func (h sortHeap) Len() int           { return len(h) }
func (h sortHeap) Less(i, j int) bool { return compareSorted(h[i].head, h[j].head) < 0 }
func (h sortHeap) Swap(i, j int)      { h[i], h[j] = h[j], h[i] }
func (h *sortHeap) Push(x any)        { *h = append(*h, x.(*sortSource)) }
func (h *sortHeap) Pop() any {
	old := *h
	x := old[len(old)-1]
	*h = old[:len(old)-1]
	return x
}

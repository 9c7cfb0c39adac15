package export

import (
	"errors"
	"fmt"
	"io"
	"os"
	"strings"
	"sync"
)

// spillPrefix starts the name of a page spill file (which also ends in TempSuffix,
// so that a rerun removes one a crash left where the system cannot unlink open files).
const spillPrefix = "pages-"

// spillPool is a parquet-go page buffer pool that keeps the compressed pages of a
// shard's open row group in temporary files instead of on the heap. Each column
// of the open row group holds one buffer until the group is flushed, so in memory
// a writer's pages grow with the row-group size and with every split whose group
// is still filling; in files they cost page cache, not the process's memory. A file
// is unlinked as soon as it is created where the system allows (so a crash leaves
// nothing behind), and files are reused from one row group to the next.
type spillPool struct {
	dir string

	mu    sync.Mutex
	free  []*os.File
	files []*os.File
	named []string // files that could not be unlinked while open
}

func newSpillPool(dir string) *spillPool { return &spillPool{dir: dir} }

// GetBuffer implements parquet.BufferPool.
func (p *spillPool) GetBuffer() io.ReadWriteSeeker {
	p.mu.Lock()
	defer p.mu.Unlock()
	if n := len(p.free); n > 0 {
		f := p.free[n-1]
		p.free = p.free[:n-1]
		return f
	}
	f, named, err := createScratch(p.dir)
	if err != nil {
		return failedBuffer{fmt.Errorf("page spill file: %w", err)}
	}
	if named != "" {
		p.named = append(p.named, named)
	}
	p.files = append(p.files, f)
	return f
}

// createScratch creates a scratch file in dir and unlinks it at once, so that a
// crash leaves nothing behind. Where the system cannot unlink an open file, named
// is its name, which the caller removes after closing it (a rerun removes one a
// crash left: spill names end in TempSuffix).
func createScratch(dir string) (f *os.File, named string, err error) {
	f, err = os.CreateTemp(dir, spillPrefix+"*"+TempSuffix)
	if err != nil {
		return nil, "", err
	}
	if os.Remove(f.Name()) != nil {
		named = f.Name()
	}
	return f, named, nil
}

// PutBuffer implements parquet.BufferPool. The writer reads a buffer up to its
// end, so a file is emptied before it is reused.
func (p *spillPool) PutBuffer(b io.ReadWriteSeeker) {
	f, ok := b.(*os.File)
	if !ok {
		return
	}
	if f.Truncate(0) != nil {
		return // not reused; close still closes it
	}
	p.mu.Lock()
	p.free = append(p.free, f)
	p.mu.Unlock()
}

// close closes and removes every file of the pool.
func (p *spillPool) close() error {
	p.mu.Lock()
	defer p.mu.Unlock()
	var errs []error
	for _, f := range p.files {
		errs = append(errs, f.Close())
	}
	for _, name := range p.named {
		if err := os.Remove(name); err != nil && !errors.Is(err, os.ErrNotExist) {
			errs = append(errs, err)
		}
	}
	p.files, p.free, p.named = nil, nil, nil
	if err := errors.Join(errs...); err != nil {
		return fmt.Errorf("page spill files: %w", err)
	}
	return nil
}

// isSpillName reports whether a file name (without TempSuffix) is a spill file's.
func isSpillName(base string) bool { return strings.HasPrefix(base, spillPrefix) }

// failedBuffer is the buffer of a spill file that could not be created: every
// use fails with the error, which the writer returns.
type failedBuffer struct{ err error }

func (b failedBuffer) Read([]byte) (int, error)       { return 0, b.err }
func (b failedBuffer) Write([]byte) (int, error)      { return 0, b.err }
func (b failedBuffer) Seek(int64, int) (int64, error) { return 0, b.err }

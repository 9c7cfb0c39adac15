package ingest

import (
	"archive/tar"
	"archive/zip"
	"bufio"
	"compress/gzip"
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"slices"
	"strings"
	"sync"
	"sync/atomic"
)

// Archives are read in place, as sources of their own or inside a folder source (then
// their entries' paths are the archive's path within the folder, "/", the entry name): zip entries through the central directory (random access,
// so workers decompress entries in parallel), tar streams in one listing pass and then
// one or more reading passes that keep at most Limits.MaxBuffered entry bytes, so
// entries come out sorted by name whatever their order in the stream. Nothing is ever
// written to disk. Hostile entries (unsafe names, links, special files, sizes over the
// caps) become skipped entries with a reason; an archive over the entry-count or total
// size cap is refused as a whole, as one record with an empty path.

// safeEntryName reports whether an archive entry name is relative and stays inside the
// archive: not absolute (/x, \x, C:x), no .. element, no NUL byte.
func safeEntryName(name string) bool {
	if name == "" || strings.ContainsRune(name, 0) {
		return false
	}
	if name[0] == '/' || name[0] == '\\' {
		return false
	}
	if len(name) >= 2 && name[1] == ':' {
		return false
	}
	for _, el := range strings.FieldsFunc(name, func(r rune) bool { return r == '/' || r == '\\' }) {
		if el == ".." {
			return false
		}
	}
	return true
}

// sharedFile is an archive file shared by the workers reading its entries; it is closed
// when the last reference is released (the enumerator holds one until it is done).
type sharedFile struct {
	f    *os.File
	refs atomic.Int64
	once sync.Once
}

func (s *sharedFile) acquire() { s.refs.Add(1) }

func (s *sharedFile) release() {
	if s.refs.Add(-1) == 0 {
		s.close()
	}
}

func (s *sharedFile) close() { s.once.Do(func() { s.f.Close() }) }

// archiveError makes the entry that stands for the whole archive: an empty path for an
// archive given as a source, the archive's own path for one inside a folder.
func archiveError(base entry, err error) *entry {
	e := base
	e.path = strings.TrimSuffix(base.path, "/")
	e.err = err
	return &e
}

// entryCheck classifies one archive entry by its header; it returns ok=false for an
// entry that is no record at all (a folder) and a non-nil error for one to skip.
func entryCheck(name string, mode fs.FileMode, size int64, lim *Limits, maxFile int64) (bool, error) {
	switch {
	case mode.IsDir() || strings.HasSuffix(name, "/"):
		return false, nil
	case !safeEntryName(name):
		return true, ErrUnsafePath
	case mode&fs.ModeSymlink != 0:
		return true, ErrLinkEntry
	case !mode.IsRegular():
		return true, ErrSpecialEntry
	case !isMIDIName(name):
		return true, ErrNotMIDI
	case size > lim.MaxEntrySize:
		return true, fmt.Errorf("%d bytes, cap %s: %w", size, sizeString(lim.MaxEntrySize), ErrEntryTooLarge)
	case size > maxFile && !isGzipName(name):
		// Checked before reading, as for files in folders.
		return true, fmt.Errorf("%d bytes, limit %s: %w", size, sizeString(maxFile), ErrTooLarge)
	}
	return true, nil
}

// enumerateZip emits the entries of a zip file sorted by name (ties in directory order).
func enumerateZip(ctx context.Context, path string, base entry, opts *Options, emit emitFunc) error {
	lim := &opts.Limits
	f, err := os.Open(path)
	if err != nil {
		return emit(archiveError(base, fmt.Errorf("open zip: %w", err)))
	}
	sf := &sharedFile{f: f}
	sf.acquire()
	defer sf.release()
	fi, err := f.Stat()
	if err != nil {
		return emit(archiveError(base, fmt.Errorf("open zip: %w", err)))
	}
	zr, err := zip.NewReader(f, fi.Size())
	if err != nil && !errors.Is(err, zip.ErrInsecurePath) {
		// zip.NewReader refuses a directory claiming more entries than the file could
		// hold, so the count below is bounded by the file size.
		return emit(archiveError(base, fmt.Errorf("read zip: %w: %w", err, ErrBadArchive)))
	}
	if n := len(zr.File); n > lim.MaxEntries {
		return emit(archiveError(base, fmt.Errorf("%d entries, cap %d: %w", n, lim.MaxEntries, ErrTooManyEntries)))
	}
	var total uint64
	for _, zf := range zr.File {
		total += zf.UncompressedSize64
		if total > uint64(lim.MaxTotalSize) || zf.UncompressedSize64 > 1<<62 {
			return emit(archiveError(base, fmt.Errorf("over %s declared, cap %s: %w",
				sizeString(lim.MaxTotalSize), sizeString(lim.MaxTotalSize), ErrArchiveTooLarge)))
		}
	}
	files := slices.Clone(zr.File)
	slices.SortStableFunc(files, func(a, b *zip.File) int { return strings.Compare(a.Name, b.Name) })
	for _, zf := range files {
		if ctx.Err() != nil {
			return ctx.Err()
		}
		size := int64(zf.UncompressedSize64)
		isRecord, err := entryCheck(zf.Name, zf.Mode(), size, lim, opts.MaxFileSize)
		if !isRecord {
			continue
		}
		e := base
		e.path = base.path + zf.Name
		e.err = err
		if err == nil && zf.Flags&0x1 != 0 {
			// General purpose bit 0: encrypted (PKWARE APPNOTE.TXT, section 4.4.4).
			e.err = fmt.Errorf("encrypted entry: %w", ErrSpecialEntry)
		}
		if e.err == nil {
			zf := zf
			sf.acquire()
			e.release = sf.release
			e.load = func(buf []byte) ([]byte, error) {
				rc, err := zf.Open()
				if err != nil {
					return nil, fmt.Errorf("zip entry: %w: %w", err, ErrBadArchive)
				}
				defer rc.Close()
				// archive/zip also fails an entry that inflates past its declared size.
				data, err := readCappedInto(rc, buf, lim.MaxEntrySize, min(size, maxPrealloc), func() error {
					return fmt.Errorf("inflates past the cap %s: %w", sizeString(lim.MaxEntrySize), ErrEntryTooLarge)
				})
				if err != nil {
					if errors.Is(err, ErrEntryTooLarge) {
						return nil, err
					}
					return nil, fmt.Errorf("zip entry: %w: %w", err, ErrBadArchive)
				}
				return data, nil
			}
		}
		if err := emit(&e); err != nil {
			return err
		}
	}
	return nil
}

// maxPrealloc bounds the buffer sized from an entry header's declared size before any
// byte is read: a header may claim far more than the archive holds, so beyond this the
// buffer grows only as bytes arrive.
const maxPrealloc = 1 << 20

// tarItem is one tar header seen in the listing pass.
type tarItem struct {
	name  string
	size  int64
	index int   // position in the stream
	err   error // why it is skipped; nil to read it
}

// tarStream opens the tar stream of a file, through gzip when compressed. An
// uncompressed stream keeps the file's Seek so that skipped entries are not read.
func tarStream(path string, gz bool) (*tar.Reader, func() error, error) {
	if hook := tarOpenHook.Load(); hook != nil {
		(*hook)()
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, err
	}
	if !gz {
		return tar.NewReader(f), f.Close, nil
	}
	zr, err := gzip.NewReader(bufio.NewReaderSize(f, 64<<10))
	if err != nil {
		f.Close()
		return nil, nil, fmt.Errorf("decompress: %w", err)
	}
	return tar.NewReader(zr), f.Close, nil
}

// listTar reads every header of a tar stream. A damaged stream keeps the items read
// before the damage and reports the damage as tailErr; refused is set when the archive
// goes over the entry-count or total-size cap.
func listTar(ctx context.Context, path string, gz bool, lim *Limits, maxFile int64) (items []tarItem, tailErr, refused error) {
	tr, closeFn, err := tarStream(path, gz)
	if err != nil {
		return nil, fmt.Errorf("open tar: %w: %w", err, ErrBadArchive), nil
	}
	defer closeFn()
	var total int64
	for i := 0; ; i++ {
		if ctx.Err() != nil {
			return nil, nil, ctx.Err()
		}
		hdr, err := tr.Next()
		if err == io.EOF {
			return items, nil, nil
		}
		if err != nil && !errors.Is(err, tar.ErrInsecurePath) {
			return items, fmt.Errorf("read tar after %d entries: %w: %w", i, err, ErrBadArchive), nil
		}
		if i >= lim.MaxEntries {
			return nil, nil, fmt.Errorf("more than %d entries: %w", lim.MaxEntries, ErrTooManyEntries)
		}
		// The tar reader rejects negative sizes; every entry's bytes must be decompressed
		// to reach the next header, so all of them count toward the total.
		total += hdr.Size
		if total > lim.MaxTotalSize {
			return nil, nil, fmt.Errorf("over %s in entries: %w", sizeString(lim.MaxTotalSize), ErrArchiveTooLarge)
		}
		if hdr.Typeflag == tar.TypeXGlobalHeader {
			continue // PAX global header: metadata of the archive, not a file
		}
		mode := hdr.FileInfo().Mode()
		switch hdr.Typeflag {
		case tar.TypeLink:
			// A hard link entry has no data of its own; FileInfo reports it as regular.
			mode = fs.ModeSymlink
		case tar.TypeReg, tar.TypeGNUSparse:
			mode = 0
		}
		isRecord, err := entryCheck(hdr.Name, mode, hdr.Size, lim, maxFile)
		if isRecord {
			items = append(items, tarItem{name: hdr.Name, size: hdr.Size, index: i, err: err})
		}
	}
}

// enumerateTar emits the entries of a tar or gzip-compressed tar stream sorted by name.
func enumerateTar(ctx context.Context, path string, gz bool, base entry, opts *Options, emit emitFunc) error {
	lim := &opts.Limits
	items, tailErr, refused := listTar(ctx, path, gz, lim, opts.MaxFileSize)
	if refused != nil {
		if ctx.Err() != nil {
			return ctx.Err()
		}
		return emit(archiveError(base, refused))
	}
	slices.SortStableFunc(items, func(a, b tarItem) int { return strings.Compare(a.name, b.name) })
	var pass tarPass
	defer pass.close()
	for start := 0; start < len(items); {
		// A window of consecutive items (in sorted order) whose bytes fit the buffer cap.
		end, buffered, need := start, int64(0), 0
		for end < len(items) {
			it := &items[end]
			if it.err == nil {
				if need > 0 && buffered+it.size > lim.MaxBuffered {
					break
				}
				buffered += it.size
				need++
			}
			end++
		}
		window := items[start:end]
		data := make(map[int][]byte, need)
		var passErr error
		if need > 0 {
			passErr = pass.readWindow(ctx, path, gz, window, need, data)
			if ctx.Err() != nil {
				return ctx.Err()
			}
		}
		for _, it := range window {
			e := base
			e.path = base.path + it.name
			e.err = it.err
			if e.err == nil {
				b, ok := data[it.index]
				if !ok {
					e.err = passErr
					if e.err == nil {
						e.err = fmt.Errorf("entry not found on re-read: %w", ErrArchiveChanged)
					}
				}
				e.data = b
			}
			if err := emit(&e); err != nil {
				return err
			}
		}
		start = end
	}
	if tailErr != nil {
		return emit(archiveError(base, tailErr))
	}
	return nil
}

// tarPass is a reading pass over a tar stream. It stays open from one window to
// the next while the next window's entries all lie ahead of where it stopped, so
// an archive whose entries are stored in name order, as most are, is read once
// after the listing instead of once per window from its start (for a compressed
// stream, every pass decompresses everything before the entries it wants).
type tarPass struct {
	tr      *tar.Reader
	closeFn func() error
	next    int // stream index of the next header tr returns
}

func (p *tarPass) close() {
	if p.closeFn != nil {
		p.closeFn()
	}
	*p = tarPass{}
}

// readWindow reads on, or again from the start when the window begins behind the
// pass, and keeps the bytes of the window's readable items, by stream index,
// stopping once all need of them are read. A failed pass is closed.
func (p *tarPass) readWindow(ctx context.Context, path string, gz bool, window []tarItem, need int, data map[int][]byte) error {
	want := make(map[int]*tarItem, need)
	first := math.MaxInt
	for i := range window {
		if window[i].err == nil {
			want[window[i].index] = &window[i]
			first = min(first, window[i].index)
		}
	}
	if p.tr == nil || first < p.next {
		p.close()
		tr, closeFn, err := tarStream(path, gz)
		if err != nil {
			return fmt.Errorf("reopen tar: %w", err)
		}
		p.tr, p.closeFn = tr, closeFn
	}
	err := p.read(ctx, want, need, data)
	if err != nil {
		p.close()
	}
	return err
}

func (p *tarPass) read(ctx context.Context, want map[int]*tarItem, need int, data map[int][]byte) error {
	for ; len(data) < need; p.next++ {
		if ctx.Err() != nil {
			return ctx.Err()
		}
		hdr, err := p.tr.Next()
		if err == io.EOF {
			return fmt.Errorf("stream ended early on re-read: %w", ErrArchiveChanged)
		}
		if err != nil && !errors.Is(err, tar.ErrInsecurePath) {
			return fmt.Errorf("re-read tar: %w: %w", err, ErrBadArchive)
		}
		it, ok := want[p.next]
		if !ok {
			continue
		}
		if hdr.Name != it.name || hdr.Size != it.size {
			return fmt.Errorf("entry %d is now %q: %w", p.next, hdr.Name, ErrArchiveChanged)
		}
		// it.size was checked against Limits.MaxEntrySize in the listing pass, and the tar
		// reader yields exactly hdr.Size bytes or an error; the buffer is sized from the
		// header only up to maxPrealloc, as the stream may end before.
		b, err := readCapped(p.tr, it.size, min(it.size, maxPrealloc), ErrArchiveChanged)
		if err == nil && int64(len(b)) != it.size {
			err = io.ErrUnexpectedEOF
		}
		if err != nil {
			return fmt.Errorf("read tar entry %s: %w: %w", it.name, err, ErrBadArchive)
		}
		data[p.next] = b
	}
	return nil
}

// tarOpenHook, when set (by tests), is called each time a tar stream is opened.
var tarOpenHook atomic.Pointer[func()]

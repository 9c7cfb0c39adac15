package ingest

import (
	"bytes"
	"compress/gzip"
	"errors"
	"fmt"
	"io"
)

// Limits cap what one archive may make Scan read, so that a zip bomb, a gzip bomb or an
// archive of millions of entries is refused instead of exhausting memory or time. A zero
// field means its default (see DefaultLimits).
type Limits struct {
	// MaxEntries is the most entries one archive may hold; an archive with more is refused
	// as a whole (one record for the archive, reason ErrTooManyEntries).
	MaxEntries int
	// MaxEntrySize is the most decompressed bytes one archive entry may hold, whatever its
	// header claims; a larger entry is skipped with ErrEntryTooLarge.
	MaxEntrySize int64
	// MaxTotalSize is the most decompressed bytes one archive may hold in all its entries;
	// an archive over it is refused as a whole with ErrArchiveTooLarge.
	MaxTotalSize int64
	// MaxBuffered is the most entry bytes held in memory while a tar stream is read back
	// in sorted order; an archive whose MIDI entries exceed it is read in several passes.
	MaxBuffered int64
}

// DefaultLimits returns the default caps: 100,000 entries, 64 MiB per entry, 4 GiB per
// archive, 128 MiB buffered.
func DefaultLimits() Limits {
	return Limits{MaxEntries: 100_000, MaxEntrySize: 64 << 20, MaxTotalSize: 4 << 30, MaxBuffered: 128 << 20}
}

// withDefaults fills every zero field with its default.
func (l Limits) withDefaults() Limits {
	d := DefaultLimits()
	if l.MaxEntries <= 0 {
		l.MaxEntries = d.MaxEntries
	}
	if l.MaxEntrySize <= 0 {
		l.MaxEntrySize = d.MaxEntrySize
	}
	if l.MaxTotalSize <= 0 {
		l.MaxTotalSize = d.MaxTotalSize
	}
	if l.MaxBuffered <= 0 {
		l.MaxBuffered = d.MaxBuffered
	}
	return l
}

// Errors of sources and archives, wrapped with context; test with errors.Is.
var (
	ErrNotMIDI         = errors.New("not MIDI")
	ErrUnsafePath      = errors.New("unsafe entry name (absolute or with ..)")
	ErrLinkEntry       = errors.New("link entry (symlink or hard link) not followed")
	ErrSpecialEntry    = errors.New("not a regular file")
	ErrEntryTooLarge   = errors.New("decompressed entry over the size cap")
	ErrTooManyEntries  = errors.New("archive has more entries than the cap")
	ErrArchiveTooLarge = errors.New("archive decompresses to more than the total size cap")
	ErrArchiveChanged  = errors.New("archive changed while being read")
	ErrBadArchive      = errors.New("damaged archive")
	ErrUnknownSource   = errors.New("not a folder, archive, path list or MIDI file")
	ErrRepeatedPath    = errors.New("dataset and path already given to an earlier input")
)

// readCapped reads all of r when it holds at most max bytes, and never reads more than
// max+1 bytes: over the cap it returns tooBig. sizeHint, when positive and within the
// cap, sizes the buffer in one allocation.
func readCapped(r io.Reader, max, sizeHint int64, tooBig error) ([]byte, error) {
	return readCappedInto(r, nil, max, sizeHint, func() error { return tooBig })
}

// readCappedInto is readCapped reading into the storage of buf when it is large enough
// (its contents are overwritten), so that a worker reuses one buffer from file to file
// instead of allocating and zeroing one per file; tooBig makes the error only when the
// cap is passed.
func readCappedInto(r io.Reader, buf []byte, max, sizeHint int64, tooBig func() error) ([]byte, error) {
	if sizeHint > max {
		return nil, tooBig()
	}
	// Room for the expected size and one more read that sees EOF, without regrowing.
	want := int64(bytes.MinRead)
	if sizeHint > 0 {
		want += sizeHint
	}
	if int64(cap(buf)) < want {
		buf = make([]byte, 0, want)
	}
	b := buf[:0]
	lr := io.LimitedReader{R: r, N: max + 1}
	for {
		if len(b) == cap(b) {
			if int64(len(b)) > max {
				break
			}
			b = growCapped(b, max)
		}
		n, err := lr.Read(b[len(b):cap(b)])
		b = b[:len(b)+n]
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
	}
	if int64(len(b)) > max {
		return nil, tooBig()
	}
	return b, nil
}

// growCapped returns b, full and at most max bytes long, in a buffer of twice its
// capacity, as bytes.Buffer grows (append grows large slices by a quarter, which
// allocates more in all), but never past max and one byte: reading one byte more
// than the cap shows that a file passes it.
func growCapped(b []byte, max int64) []byte {
	nb := make([]byte, len(b), min(2*int64(cap(b)), max+1))
	copy(nb, b)
	return nb
}

// gzipMagic is the two-byte ID of a gzip member (RFC 1952, section 2.3.1).
var gzipMagic = []byte{0x1f, 0x8b}

// gunzipCapped decompresses a whole gzip stream of at most max decompressed bytes: a
// gzip bomb stops after max+1 bytes with ErrTooLarge.
func gunzipCapped(data []byte, max int64) ([]byte, error) {
	if !bytes.HasPrefix(data, gzipMagic) {
		return nil, ErrNotGzip
	}
	zr, err := gzip.NewReader(bytes.NewReader(data))
	if err != nil {
		return nil, fmt.Errorf("decompress: %w", err)
	}
	defer zr.Close()
	out, err := readCapped(zr, max, 0, fmt.Errorf("gzip: decompressed data over %s: %w", sizeString(max), ErrTooLarge))
	if err != nil {
		if errors.Is(err, ErrTooLarge) {
			return nil, err
		}
		return nil, fmt.Errorf("decompress: %w", err)
	}
	return out, nil
}

// sizeString renders a byte count for reasons: whole MiB or KiB when exact, else bytes.
func sizeString(n int64) string {
	switch {
	case n >= 1<<20 && n%(1<<20) == 0:
		return fmt.Sprintf("%d MiB", n>>20)
	case n >= 1<<10 && n%(1<<10) == 0:
		return fmt.Sprintf("%d KiB", n>>10)
	}
	return fmt.Sprintf("%d bytes", n)
}

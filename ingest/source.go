package ingest

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
)

// Source is one input of a scan: a folder (read recursively), a .zip, .tar, .tar.gz or
// .tgz archive (entries read in place, never extracted), a .txt or .lst file listing
// paths (one per line), or a single MIDI file. Each source is one dataset.
type Source struct {
	Path string
	// Dataset names the source in records and summaries; empty means the base name of
	// the folder or file without its extensions ("corpus.tar.gz" -> "corpus").
	Dataset string
}

// ParseSource reads a command-line source argument: PATH, or NAME=PATH to name the
// dataset. An argument is read as NAME=PATH only when the text before the first "=" is a
// non-empty name without a path separator and the whole argument is not an existing path.
func ParseSource(arg string) Source {
	if name, path, ok := strings.Cut(arg, "="); ok && name != "" && path != "" && !strings.ContainsAny(name, `/\`) {
		if _, err := os.Lstat(arg); err != nil {
			return Source{Path: path, Dataset: name}
		}
	}
	return Source{Path: arg}
}

// DatasetName returns the dataset name: Dataset when set, else the base name of Path
// without its source or MIDI extensions.
func (s Source) DatasetName() string {
	if s.Dataset != "" {
		return s.Dataset
	}
	p := filepath.Clean(s.Path)
	if p == "." || p == ".." || p == string(filepath.Separator) {
		if abs, err := filepath.Abs(p); err == nil {
			p = abs
		}
	}
	base := filepath.Base(p)
	lower := strings.ToLower(base)
	for _, ext := range []string{".tar.gz", ".tgz", ".tar", ".zip", ".txt", ".lst"} {
		if strings.HasSuffix(lower, ext) && len(base) > len(ext) {
			return base[:len(base)-len(ext)]
		}
	}
	if isMIDIName(base) {
		if strings.HasSuffix(lower, ".gz") {
			base = base[:len(base)-3]
		}
		return strings.TrimSuffix(base, filepath.Ext(base))
	}
	return base
}

// sourceKind is how a source is enumerated.
type sourceKind int

const (
	kindFolder sourceKind = iota
	kindZip
	kindTar
	kindTarGz
	kindList
	kindFile
)

// kind classifies a source by what is on disk and its name; a missing path or an
// unknown kind of file is an error before any file is read.
func (s Source) kind() (sourceKind, error) {
	fi, err := os.Stat(s.Path)
	if err != nil {
		return 0, fmt.Errorf("source %s: %w", s.Path, err)
	}
	if fi.IsDir() {
		return kindFolder, nil
	}
	lower := strings.ToLower(s.Path)
	if k, ok := archiveKind(lower); ok && fi.Mode().IsRegular() {
		return k, nil
	}
	switch {
	case !fi.Mode().IsRegular():
		return 0, fmt.Errorf("source %s: %w", s.Path, ErrSpecialEntry)
	case strings.HasSuffix(lower, ".txt"), strings.HasSuffix(lower, ".lst"):
		return kindList, nil
	case isMIDIName(lower):
		return kindFile, nil
	}
	return 0, fmt.Errorf("source %s: %w", s.Path, ErrUnknownSource)
}

// midiExts are the file name extensions read as MIDI, compared case-insensitively
// (common practice: .mid and .midi for SMF, .smf, and .rmi for RIFF-wrapped MIDI).
var midiExts = []string{".mid", ".midi", ".smf", ".rmi"}

// isMIDIName reports whether a file name has a MIDI extension, optionally followed by .gz.
func isMIDIName(name string) bool {
	lower := strings.ToLower(name)
	lower = strings.TrimSuffix(lower, ".gz")
	for _, ext := range midiExts {
		if strings.HasSuffix(lower, ext) && len(lower) > len(ext) && lower[len(lower)-len(ext)-1] != '/' {
			return true
		}
	}
	return false
}

// isGzipName reports whether a MIDI file name says the bytes are gzip-compressed.
func isGzipName(name string) bool {
	return strings.HasSuffix(strings.ToLower(name), ".gz")
}

// entry is one input file of a source, ready for a worker: its bytes are either
// preloaded (tar streams), loaded on demand (folders, zip), or it is already known to be
// skipped (err set).
type entry struct {
	dataset, source, path string
	data                  []byte
	load                  func(buf []byte) ([]byte, error) // may read into buf's storage
	release               func()                           // called once the entry's bytes were loaded (or abandoned)
	err                   error
}

// emitFunc hands one entry on; it blocks while the pipeline is full and fails only when
// the scan is cancelled.
type emitFunc func(*entry) error

// enumerate lists a source's inputs in stable order (sorted by path) and emits them.
// Per-file and per-source problems become entries with err set; only cancellation
// returns an error.
func enumerate(ctx context.Context, src Source, kind sourceKind, opts *Options, emit emitFunc) error {
	ds := src.DatasetName()
	base := entry{dataset: ds, source: src.Path}
	switch kind {
	case kindFolder:
		return enumerateFolder(ctx, src.Path, base, opts, emit)
	case kindZip:
		return enumerateZip(ctx, src.Path, base, opts, emit)
	case kindTar, kindTarGz:
		return enumerateTar(ctx, src.Path, kind == kindTarGz, base, opts, emit)
	case kindList:
		return enumerateList(src.Path, base, opts, emit)
	case kindFile:
		e := base
		e.path = filepath.Base(src.Path)
		e.load = fileLoader(src.Path, opts.MaxFileSize)
		return emit(&e)
	}
	return fmt.Errorf("internal error: unknown source kind %d", kind)
}

// fileLoader reads a file of at most max bytes, checking its size before reading and
// never reading more than max+1 bytes (the file may grow while read).
func fileLoader(path string, max int64) func([]byte) ([]byte, error) {
	return func(buf []byte) ([]byte, error) {
		return readRegular(path, buf, max, func() error {
			return fmt.Errorf("grew past the limit %s while read: %w", sizeString(max), ErrTooLarge)
		})
	}
}

// openRegular opens a regular file of at most max bytes and returns its size.
func openRegular(path string, max int64) (*os.File, int64, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, 0, err
	}
	fi, err := f.Stat()
	switch {
	case err != nil:
	case !fi.Mode().IsRegular():
		err = ErrSpecialEntry
	case fi.Size() > max:
		err = fmt.Errorf("%d bytes, limit %s: %w", fi.Size(), sizeString(max), ErrTooLarge)
	}
	if err != nil {
		f.Close()
		return nil, 0, err
	}
	return f, fi.Size(), nil
}

// tagBad is the nameSort tag of a folder entry that is an error, kept by name in
// enumerateFolder.
const tagBad = 255

// enumerateFolder walks a folder recursively, following symbolic links to folders at
// most once each (so link loops end), and emits its MIDI files sorted by relative path.
// Zip and tar archives in the folder are read in place at their place in that order,
// their entries named "archive/entry". Other files are ignored; an unreadable subfolder
// or a broken link with a MIDI name is an entry with its error.
func enumerateFolder(ctx context.Context, root string, base entry, opts *Options, emit emitFunc) error {
	// The names are sorted in bounded memory (nameSort), each tagged with its kind;
	// the few entries that are errors keep their error here, by name.
	names := newNameSort()
	bad := map[string]error{}
	addBad := func(rel string, err error) {
		if _, dup := bad[rel]; !dup {
			bad[rel] = err
			names.add(rel, tagBad)
		}
	}
	visited := map[string]bool{}
	var walk func(dir, rel string)
	walk = func(dir, rel string) {
		if real, err := filepath.EvalSymlinks(dir); err == nil {
			if visited[real] {
				return
			}
			visited[real] = true
		}
		des, err := os.ReadDir(dir)
		if err != nil {
			addBad(relOrDot(rel), fmt.Errorf("read folder: %w", err))
		}
		for _, de := range des {
			abs := filepath.Join(dir, de.Name())
			r := de.Name()
			if rel != "" {
				r = rel + "/" + de.Name()
			}
			mode := de.Type()
			if mode&fs.ModeSymlink != 0 {
				fi, err := os.Stat(abs)
				if err != nil {
					if isMIDIName(de.Name()) {
						addBad(r, fmt.Errorf("broken link: %w", err))
					}
					continue
				}
				mode = fi.Mode().Type()
			}
			ak, isArchive := archiveKind(de.Name())
			switch {
			case mode.IsDir():
				walk(abs, r)
			case isArchive && mode.IsRegular():
				names.add(r, byte(ak))
			case !isMIDIName(de.Name()):
			case mode.IsRegular():
				names.add(r, byte(kindFile))
			default:
				addBad(r, ErrSpecialEntry)
			}
		}
	}
	walk(root, "")
	return names.each(func(rel string, tag byte) error {
		e := base
		e.path = rel
		// the walk joined the same names with the separator
		abs := filepath.Join(root, filepath.FromSlash(rel))
		switch k := sourceKind(tag); {
		case tag == tagBad:
			e.err = bad[rel]
			return emit(&e)
		case k == kindZip:
			e.path += "/"
			return enumerateZip(ctx, abs, e, opts, emit)
		case k == kindTar || k == kindTarGz:
			e.path += "/"
			return enumerateTar(ctx, abs, k == kindTarGz, e, opts, emit)
		default:
			e.load = fileLoader(abs, opts.MaxFileSize)
			return emit(&e)
		}
	})
}

// archiveKind reports whether a file name is that of an archive read in place.
func archiveKind(name string) (sourceKind, bool) {
	lower := strings.ToLower(name)
	switch {
	case strings.HasSuffix(lower, ".zip"):
		return kindZip, true
	case strings.HasSuffix(lower, ".tar"):
		return kindTar, true
	case strings.HasSuffix(lower, ".tar.gz"), strings.HasSuffix(lower, ".tgz"):
		return kindTarGz, true
	}
	return 0, false
}

func relOrDot(rel string) string {
	if rel == "" {
		return "."
	}
	return rel
}

// maxListSize caps a path-list file (a list of a million long paths fits).
const maxListSize = 256 << 20

// enumerateList reads a file listing one path per line (blank lines and lines starting
// with # ignored; relative paths are relative to the list file's folder) and emits each
// listed file, sorted by the path as written. Every listed path is an input, whatever
// its extension, once however often it is listed; a name ending in .gz is decompressed.
func enumerateList(listPath string, base entry, opts *Options, emit emitFunc) error {
	f, _, err := openRegular(listPath, maxListSize)
	if err != nil {
		e := base
		e.err = fmt.Errorf("read path list: %w", err)
		return emit(&e)
	}
	defer f.Close()
	dir := filepath.Dir(listPath)
	// The paths are sorted in bounded memory (nameSort), read line by line within
	// the list's size cap (the file may grow while read).
	names := newNameSort()
	lr := &io.LimitedReader{R: f, N: maxListSize + 1}
	sc := bufio.NewScanner(lr)
	sc.Buffer(nil, 1<<20)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		names.add(line, 0)
	}
	var scanErr error
	switch err := sc.Err(); {
	case err != nil:
		scanErr = fmt.Errorf("read path list: %w", err)
	case lr.N == 0:
		scanErr = fmt.Errorf("read path list: grew past the limit %s while read: %w", sizeString(maxListSize), ErrTooLarge)
	}
	prev, first := "", true
	err = names.each(func(p string, _ byte) error {
		// A path listed twice is one input file: one record, not a copy of itself.
		if !first && p == prev {
			return nil
		}
		prev, first = p, false
		e := base
		e.path = p
		abs := p
		if !filepath.IsAbs(abs) {
			abs = filepath.Join(dir, p)
		}
		e.load = fileLoader(abs, opts.MaxFileSize)
		return emit(&e)
	})
	if err != nil {
		return err
	}
	if scanErr != nil {
		e := base
		e.err = scanErr
		return emit(&e)
	}
	return nil
}

// Load reads one MIDI file as Scan does: its size checked against max (0: 64 MiB)
// before it is read, never more than max+1 bytes read, and a name ending in .gz
// decompressed within the same cap.
func Load(path string, max int64) ([]byte, error) {
	if max <= 0 {
		max = DefaultMaxFileSize
	}
	data, err := fileLoader(path, max)(nil)
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return nil, err // names the path already
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if isGzipName(path) {
		if data, err = gunzipCapped(data, max); err != nil {
			return nil, fmt.Errorf("%s: %w", path, err)
		}
	}
	return data, nil
}

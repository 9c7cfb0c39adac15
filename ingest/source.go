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

// Tags of folder entries in a folder's nameSort besides source kinds: an entry that
// is an error (its error kept by name in the walk), and a subfolder, added as its
// name and a slash.
const (
	tagBad = 255
	tagDir = 254
)

// listBatch is the number of entries read from a folder at a time.
const listBatch = 256

// enumerateFolder walks a folder recursively, following symbolic links to folders at
// most once each (so link loops end), and emits its MIDI files sorted by relative path.
// Zip and tar archives in the folder are read in place at their place in that order,
// their entries named "archive/entry". Other files are ignored; an unreadable subfolder
// or a broken link with a MIDI name is an entry with its error.
//
// The walk emits as it goes, so parsing starts with the first file rather than after
// the whole tree is listed. Each folder's entries are sorted (nameSort: bounded memory
// for a folder of any size) with a subfolder listed as its name and a slash, so that
// visiting the folders in that order gives every path in sorted order: "b.mid" comes
// before "b/x.mid", as '.' sorts before '/'. A subfolder that cannot be opened is an
// entry at its own name; an error part-way through listing a folder is an entry named
// for the folder, emitted before the entries read from it.
func enumerateFolder(ctx context.Context, root string, base entry, opts *Options, emit emitFunc) error {
	w := folderWalk{base: base, opts: opts, emit: emit, ctx: ctx, visited: map[string]bool{}}
	return w.walk(root, "")
}

// folderWalk is the state of one enumerateFolder.
type folderWalk struct {
	ctx     context.Context
	base    entry
	opts    *Options
	emit    emitFunc
	visited map[string]bool // real paths of the folders walked
}

// walk emits the entries of folder dir, whose path relative to the root is rel ("" for
// the root).
func (w *folderWalk) walk(dir, rel string) error {
	if real, err := filepath.EvalSymlinks(dir); err == nil {
		if w.visited[real] {
			return nil
		}
		w.visited[real] = true
	}
	names := newNameSort()
	bad := map[string]error{}
	addBad := func(name string, err error) {
		if _, dup := bad[name]; !dup {
			bad[name] = err
			names.add(name, tagBad)
		}
	}
	if err := listFolder(dir, func(de fs.DirEntry) {
		name := de.Name()
		abs := filepath.Join(dir, name)
		mode := de.Type()
		if mode&fs.ModeSymlink != 0 {
			fi, err := os.Stat(abs)
			if err != nil {
				if isMIDIName(name) {
					addBad(name, fmt.Errorf("broken link: %w", err))
				}
				return
			}
			mode = fi.Mode().Type()
		}
		ak, isArchive := archiveKind(name)
		switch {
		case mode.IsDir():
			// Opened here, so that a folder that cannot be read is reported at its
			// own name's place in the order.
			f, err := os.Open(abs)
			if err != nil {
				addBad(name, fmt.Errorf("read folder: %w", err))
				return
			}
			f.Close()
			names.add(name+"/", tagDir)
		case isArchive && mode.IsRegular():
			names.add(name, byte(ak))
		case !isMIDIName(name):
		case mode.IsRegular():
			names.add(name, byte(kindFile))
		default:
			addBad(name, ErrSpecialEntry)
		}
	}); err != nil {
		addBad("", fmt.Errorf("read folder: %w", err)) // "" sorts first
	}
	return names.each(func(name string, tag byte) error {
		if tag == tagDir {
			sub := strings.TrimSuffix(name, "/")
			return w.walk(filepath.Join(dir, sub), joinRel(rel, sub))
		}
		e := w.base
		e.path = relOrDot(joinRel(rel, name))
		abs := filepath.Join(dir, name)
		switch k := sourceKind(tag); {
		case tag == tagBad:
			e.err = bad[name]
			return w.emit(&e)
		case k == kindZip:
			e.path += "/"
			return enumerateZip(w.ctx, abs, e, w.opts, w.emit)
		case k == kindTar || k == kindTarGz:
			e.path += "/"
			return enumerateTar(w.ctx, abs, k == kindTarGz, e, w.opts, w.emit)
		default:
			e.load = fileLoader(abs, w.opts.MaxFileSize)
			return w.emit(&e)
		}
	})
}

// listFolder calls fn with each entry of folder dir, reading a batch at a time so
// that a folder of a million files is never held whole.
func listFolder(dir string, fn func(fs.DirEntry)) error {
	f, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer f.Close()
	for {
		des, err := f.ReadDir(listBatch)
		for _, de := range des {
			fn(de)
		}
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return err
		}
	}
}

// joinRel joins a relative folder path and a name with a slash.
func joinRel(rel, name string) string {
	switch {
	case rel == "":
		return name
	case name == "":
		return rel
	}
	return rel + "/" + name
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
// with # ignored; CR LF line ends and a leading byte-order mark allowed; relative
// paths are relative to the list file's folder) and emits each listed file, sorted by
// the path as written. Every listed path is an input, whatever its extension, once
// however often it is listed; a name ending in .gz is decompressed.
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
	for first := true; sc.Scan(); first = false {
		line := sc.Text()
		if first {
			// A list saved by a Windows editor may begin with a UTF-8 byte-order mark
			// (and end its lines with CR LF, which TrimSpace takes off).
			line = strings.TrimPrefix(line, "\ufeff")
		}
		line = strings.TrimSpace(line)
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

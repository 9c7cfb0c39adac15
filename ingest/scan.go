package ingest

import (
	"cmp"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"runtime"
	"sync"
	"sync/atomic"

	"golang.org/x/sync/errgroup"
)

// Options control a scan.
type Options struct {
	Parse ParseOptions
	// Workers is the number of files parsed at once; 0 means runtime.NumCPU().
	Workers int
	// MaxFileSize caps the MIDI bytes of one file (after gzip decompression); a larger
	// file is skipped with ErrTooLarge, its size checked before it is read and never more
	// than MaxFileSize+1 bytes read. 0 means 64 MiB.
	MaxFileSize int64
	// Strict makes Scan stop at the first file skipped for bad input (not for a filter
	// rule or a non-MIDI archive entry) and return its error, after yielding its record.
	Strict bool
	Filter Filter
	Limits Limits
	// KeepDuplicates keeps later copies as ok, with their pieces, while still filling
	// DuplicateOf and DuplicateKind.
	KeepDuplicates bool
	// Window is the number of files per worker between the listing and yield, read,
	// parsed or waiting for their turn; 0 means DefaultWindow. A consumer slower than
	// the parse keeps about that many parsed files per worker in memory.
	Window int
}

// DefaultWindow is the default Options.Window. Fewer files in flight took 15-20 %
// longer to scan on two cores: the goroutine that orders the results often waits
// for a core while every core parses, and room for results lets the workers go on
// meanwhile instead of blocking on it.
const DefaultWindow = 16

// DefaultMaxFileSize is the default per-file size cap.
const DefaultMaxFileSize = 64 << 20

// DefaultOptions returns the defaults: pedal on, all cores, 64 MiB per file, at least one
// note per file, default archive limits.
func DefaultOptions() Options {
	return Options{Parse: DefaultParseOptions(), MaxFileSize: DefaultMaxFileSize,
		Filter: Filter{MinNotes: 1}, Limits: DefaultLimits()}
}

// Scan reads every input file of the sources, in stable order (sources in the given
// order, files sorted by path within each), parses them on a pool of workers, applies
// the filter, finds duplicates, and calls yield once per input file in that order,
// whatever the number of workers. Memory stays bounded: at most Options.Window files per
// worker are in flight, and tar streams buffer at most Limits.MaxBuffered bytes.
//
// Duplicates are found in that order: a file is an exact duplicate when an earlier kept
// file has the same MIDI bytes, a musical duplicate when an earlier one has the same
// notes in beat time, a transposed duplicate when they differ only by transposition (see
// the hashes' doc). A format-2 file is a duplicate only when every piece with notes is
// one (of any earlier file); its kind is then the coarsest kind among its pieces.
//
// Bad files are reported in their records and the scan goes on, unless Strict. Scan
// returns an error when a source does not exist or is of an unknown kind (before
// anything is read), when yield returns one, when ctx ends, or under Strict.
func Scan(ctx context.Context, sources []Source, opts Options, yield func(*Result) error) error {
	opts = opts.withDefaults()
	kinds := make([]sourceKind, len(sources))
	for i, s := range sources {
		k, err := s.kind()
		if err != nil {
			return err
		}
		kinds[i] = k
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	g, gctx := errgroup.WithContext(ctx)

	type job struct {
		seq int
		e   *entry
	}
	type done struct {
		seq int
		r   *Result
	}
	// inFlight bounds the files between the producer and yield, and so the reorder
	// buffer; results has room for all of them (see DefaultWindow).
	inFlight := make(chan struct{}, opts.Window*opts.Workers)
	// Buffered, so a worker that finishes a file finds the next one waiting instead of
	// waking the producer and waiting for it (10-20 % of a two-worker scan's time).
	jobs := make(chan job, 4*opts.Workers)
	results := make(chan done, opts.Window*opts.Workers)

	g.Go(func() error {
		defer close(jobs)
		seq := 0
		emit := func(e *entry) error {
			select {
			case inFlight <- struct{}{}:
			case <-gctx.Done():
				if e.release != nil {
					e.release()
				}
				return gctx.Err()
			}
			select {
			case jobs <- job{seq, e}:
				seq++
				return nil
			case <-gctx.Done():
				if e.release != nil {
					e.release()
				}
				return gctx.Err()
			}
		}
		for i, s := range sources {
			if err := enumerate(gctx, s, kinds[i], &opts, emit); err != nil {
				return err
			}
		}
		return nil
	})
	var workers sync.WaitGroup
	for range opts.Workers {
		workers.Add(1)
		g.Go(func() error {
			defer workers.Done()
			h := newPieceHasher()
			var buf []byte // the worker's read buffer, reused from file to file
			for j := range jobs {
				if gctx.Err() != nil {
					// Cancelled: keep taking jobs so the producer's sends end, but read nothing.
					if j.e.release != nil {
						j.e.release()
					}
					continue
				}
				r := processGuarded(j.e, &opts, h, &buf)
				if hook := scanProcessedHook.Load(); hook != nil {
					(*hook)()
				}
				select {
				case results <- done{j.seq, r}:
				case <-gctx.Done():
				}
			}
			return nil
		})
	}
	go func() {
		workers.Wait()
		close(results)
	}()

	d := newDeduper(opts.KeepDuplicates)
	defer d.close()
	names := recordNames{newKeyTable()}
	defer names.close()
	pending := map[int]*Result{}
	next := 0
	var stopErr error
	for dn := range results {
		if stopErr != nil {
			continue
		}
		pending[dn.seq] = dn.r
		for {
			r, ok := pending[next]
			if !ok {
				break
			}
			delete(pending, next)
			next++
			if err := ctx.Err(); err != nil {
				// Cancelled: the files in flight are not yielded.
				r.Release()
				stopErr = err
				break
			}
			names.check(r)
			d.check(r)
			if err := cmp.Or(names.err, d.err()); err != nil {
				stopErr = fmt.Errorf("scan: %w", err)
				cancel()
				break
			}
			err := yield(r)
			<-inFlight // only now, so a slow yield holds the pipeline back
			if err != nil {
				stopErr = err
				cancel()
				break
			}
			if opts.Strict && r.Record.Status == StatusSkipped && isBadInput(r.Err) {
				stopErr = fmt.Errorf("%s: %w", r.Record.Source, r.Err)
				cancel()
				break
			}
		}
	}
	gErr := g.Wait()
	if stopErr != nil {
		return stopErr
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	if gErr != nil {
		return gErr
	}
	if len(pending) != 0 {
		return fmt.Errorf("internal error: %d results left unordered at %d", len(pending), next)
	}
	return nil
}

// recordNames keeps every record's name unique. Records and piece ids are keyed by
// dataset and path, and two inputs can meet under one key: two entries of one name in
// an archive, or two sources of one dataset name holding the same relative path. The
// later input keeps a record of its own, skipped with ErrRepeatedPath under the name
// "PATH (repeat N)", so every input is still accounted for and no key is given twice.
// A key is kept as 16 bytes of its SHA-256, with the number of inputs that had it,
// in a keyTable.
type recordNames struct{ *keyTable }

func (n recordNames) check(r *Result) {
	rec := &r.Record
	if rec.Path == "" {
		return // a record of a whole source (a damaged archive): named by its source, no pieces
	}
	key := func(path string) dupKey {
		sum := sha256.Sum256([]byte(rec.Dataset + "\x00" + path))
		return dupKey(sum[:keyLen])
	}
	k := key(rec.Path)
	count, _ := n.get(k)
	n.set(k, count+1)
	if count == 0 {
		return
	}
	orig := rec.Path
	for {
		count++
		rec.Path = fmt.Sprintf("%s (repeat %d)", orig, count)
		if !has(n.keyTable, key(rec.Path)) {
			break
		}
	}
	n.set(key(rec.Path), 1)
	r.Err = fmt.Errorf("%s: %s/%s: %w", rec.Path, rec.Dataset, orig, ErrRepeatedPath)
	rec.Status, rec.Reason, rec.DuplicateOf, rec.DuplicateKind, rec.Pieces, rec.Notes = StatusSkipped, r.Err.Error(), "", "", 0, 0
	r.Pieces = nil
}

// scanProcessedHook, when set (by tests), is called after each file is processed.
var scanProcessedHook atomic.Pointer[func()]

// withDefaults fills the zero fields.
func (o Options) withDefaults() Options {
	if o.Workers <= 0 {
		o.Workers = runtime.NumCPU()
	}
	if o.MaxFileSize <= 0 {
		o.MaxFileSize = DefaultMaxFileSize
	}
	if o.Window <= 0 {
		o.Window = DefaultWindow
	}
	o.Limits = o.Limits.withDefaults()
	return o
}

// processGuarded is processEntry turning a panic, which would be a bug (Parse never
// panics on input), into a skipped record that says so, so one bad file cannot end a
// long run.
func processGuarded(e *entry, opts *Options, h *pieceHasher, buf *[]byte) (r *Result) {
	defer func() {
		if p := recover(); p != nil {
			r = skip(&Result{Record: FileRecord{Dataset: e.dataset, Source: e.source, Path: e.path}},
				fmt.Errorf("internal error, a bug in relshard (please report it with the file): %v", p))
		}
	}()
	return processEntry(e, opts, h, buf)
}

// maxReuse is the largest read buffer a worker keeps for the next file.
const maxReuse = 8 << 20

// processEntry reads, parses, filters and hashes one input file; every outcome is a result.
// The file's bytes are read into *buf's storage when it is large enough, and the
// buffer the bytes end up in is kept in *buf for the next file: nothing in a Result
// refers to them (Parse copies the names it keeps).
func processEntry(e *entry, opts *Options, h *pieceHasher, buf *[]byte) *Result {
	r := &Result{Record: FileRecord{Dataset: e.dataset, Source: e.source, Path: e.path}}
	data, own, err := loadEntry(e, opts, *buf)
	if err != nil {
		return skip(r, err)
	}
	if own && cap(data) <= maxReuse {
		defer func() { *buf = data[:0] }()
	}
	r.Record.Size = int64(len(data))
	r.Record.SHA256 = fileSHA256(data)
	// Without the drums filter, the notes are hashed as they are parsed; with it, the
	// drum notes are dropped first and the rest hashed after.
	hashed := !opts.Filter.DropDrums
	var pieces []Piece
	st := noStats()
	if hashed {
		pieces, st, err = parseHashed(e.path, data, opts.Parse, h)
	} else {
		pieces, err = Parse(e.path, data, opts.Parse)
	}
	if err != nil {
		return skip(r, err)
	}
	if len(pieces) == 0 {
		return skip(r, &ParseError{File: e.path, Track: -1, Offset: -1, Err: ErrNoTracks})
	}
	rec := &r.Record
	rec.Pieces = len(pieces)
	rec.Format = pieces[0].Format
	rec.TicksPerQuarter = pieces[0].TicksPerQuarter
	if pieces[0].SMPTEFPS > 0 {
		rec.TicksPerQuarter = 0
	}
	for i := range pieces {
		for k, n := range pieces[i].Warnings {
			if rec.Warnings == nil {
				rec.Warnings = Warnings{}
			}
			rec.Warnings.Add(k, n)
		}
	}
	// The filter's stats come from the hashing pass, which reads every note anyway; a
	// file the filter then skips is hashed for nothing, but skips are few.
	had := false
	if !hashed {
		had = opts.Filter.dropDrums(pieces)
		for i := range pieces {
			st.add(h.hashPiece(&pieces[i]))
		}
	}
	err = opts.Filter.check(st, had)
	rec.Notes, rec.Seconds = st.notes, st.seconds
	if err != nil {
		releasePieces(pieces)
		return skip(r, err)
	}
	rec.Status = StatusOK
	r.Pieces = pieces
	return r
}

// loadEntry returns an entry's MIDI bytes: preloaded or read (into buf's storage when
// it is large enough), then gunzipped for a .gz name, within the size caps. own
// reports whether the bytes are in a buffer of the scan's own, which may be reused
// (not the preloaded bytes of a tar entry).
func loadEntry(e *entry, opts *Options, buf []byte) (data []byte, own bool, err error) {
	if e.err != nil {
		return nil, false, e.err
	}
	data = e.data
	if e.load != nil {
		data, err = e.load(buf)
		if e.release != nil {
			e.release()
		}
		if err != nil {
			return nil, false, err
		}
		own = true
	}
	if isGzipName(e.path) {
		data, err = gunzipCapped(data, opts.MaxFileSize)
		return data, err == nil, err
	}
	if int64(len(data)) > opts.MaxFileSize {
		return nil, false, fmt.Errorf("%d bytes, limit %s: %w", len(data), sizeString(opts.MaxFileSize), ErrTooLarge)
	}
	return data, own, nil
}

// skip marks a result skipped. The reason names the file: a *ParseError does already
// (with track and byte offset where known); other errors get the path prefixed (the
// source path for a record about a whole source).
func skip(r *Result, err error) *Result {
	var pe *ParseError
	if !errors.As(err, &pe) {
		name := r.Record.Path
		if name == "" {
			name = r.Record.Source
		}
		err = fmt.Errorf("%s: %w", name, err)
	}
	r.Record.Status = StatusSkipped
	r.Record.Reason = err.Error()
	r.Err = err
	return r
}

// deduper finds duplicates in delivery order: the first file holding a hash owns it.
type deduper struct {
	keep bool
	// The hash indexes map a hash (its first 16 bytes) to the first kept file that has
	// it, as a reference into names. They are kept for the whole run, on disk past a
	// few thousand entries (see keyTable).
	exact, musical, transpos *keyTable
	names                    *nameStore // "dataset/path" of the files the indexes point at
}

// dupKey is the first 16 bytes of a hex SHA-256 (or of the SHA-256 of any other key).
type dupKey [keyLen]byte

// keyLen is the length of a dupKey.
const keyLen = 16

func keyOf(hexHash string) dupKey {
	var k dupKey
	if len(hexHash) >= 2*len(k) {
		if _, err := hex.Decode(k[:], []byte(hexHash[:2*len(k)])); err == nil {
			return k
		}
	}
	sum := sha256.Sum256([]byte(hexHash))
	return dupKey(sum[:len(k)])
}

func newDeduper(keep bool) *deduper {
	return &deduper{keep: keep, exact: newKeyTable(), musical: newKeyTable(), transpos: newKeyTable(), names: newNameStore()}
}

// err is the first I/O error of the indexes' files.
func (d *deduper) err() error {
	for _, t := range []*keyTable{d.exact, d.musical, d.transpos} {
		if t.err != nil {
			return t.err
		}
	}
	return nil
}

func (d *deduper) close() {
	d.exact.close()
	d.musical.close()
	d.transpos.close()
	d.names.close()
}

// kindRank orders duplicate kinds from finest to coarsest.
var kindRank = map[DuplicateKind]int{DupExact: 0, DupMusical: 1, DupTransposed: 2}

func (d *deduper) check(r *Result) {
	rec := &r.Record
	if rec.Status != StatusOK {
		return
	}
	exact := keyOf(rec.SHA256)
	if first, ok := d.exact.get(exact); ok {
		d.mark(r, d.names.get(first), DupExact)
		return
	}
	self := d.names.add(rec.Key())
	d.exact.set(exact, self)
	of, found := uint64(0), false
	var kind DuplicateKind
	all, any := true, false
	for i := range r.Pieces {
		p := &r.Pieces[i]
		if len(p.Notes) == 0 {
			continue
		}
		any = true
		k := DupMusical
		first, ok := d.musical.get(keyOf(p.MusicalHash))
		if !ok {
			k = DupTransposed
			first, ok = d.transpos.get(keyOf(p.TransposedHash))
		}
		if !ok {
			all = false
			continue
		}
		if !found {
			of, found = first, true
		}
		if kind == "" || kindRank[k] > kindRank[kind] {
			kind = k
		}
	}
	for i := range r.Pieces {
		p := &r.Pieces[i]
		if len(p.Notes) == 0 {
			continue
		}
		if k := keyOf(p.MusicalHash); !has(d.musical, k) {
			d.musical.set(k, self)
		}
		if k := keyOf(p.TransposedHash); !has(d.transpos, k) {
			d.transpos.set(k, self)
		}
	}
	if any && all {
		d.mark(r, d.names.get(of), kind)
	}
}

func has(t *keyTable, k dupKey) bool {
	_, ok := t.get(k)
	return ok
}

func (d *deduper) mark(r *Result, of string, kind DuplicateKind) {
	r.Record.DuplicateOf = of
	r.Record.DuplicateKind = kind
	if d.keep {
		return
	}
	r.Record.Status = StatusDuplicate
	r.Release()
	r.Pieces = nil
}

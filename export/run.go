package export

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"runtime"
	"sync"

	"golang.org/x/sync/errgroup"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/tokenize"
)

// Options are the settings of one run that do not change its output.
type Options struct {
	// Out is the dataset folder.
	Out string
	// Workers bounds the files parsed at once, and the files encoded plus the shard
	// batches compressed at once (they share Workers tokens), so a run keeps about
	// Workers cores busy; 0 means runtime.NumCPU(). The output is the same for
	// every value.
	Workers int
	// Part selects a deterministic slice of the pieces (by content hash); the zero
	// Part is the whole corpus. A part run writes shards named for its part and a
	// partial manifest; Merge combines the parts.
	Part Part
	// Overwrite allows replacing a dataset (or unfinished run) of another config in
	// Out, removing only the files it made.
	Overwrite bool
	// Licenses maps dataset names to the licence or provenance text listed in the
	// manifest.
	Licenses map[string]string
	// ToolVersion is recorded in the manifest and the shards' footers.
	ToolVersion string
	// Progress, when set, is called after each input file and each written shard,
	// never concurrently.
	Progress func(Progress)
}

// Progress counts the work done so far.
type Progress struct {
	Files   int64 // input files accounted for
	Windows int64 // rows handed to the shard writers
	Shards  int64 // shards written (or kept)
	Reused  int64 // of those, shards kept from an interrupted run of the same config
}

// Run exports a corpus: it scans the sources (ingest.Scan), encodes each kept
// piece of this part into windows (tokenize), counts their relative-position
// coverage (relpos), writes the windows as Parquet shards per split, and writes
// the manifest last. Every input file is listed in the manifest exactly once.
//
// The returned manifest is the one written, except that its Files are left out:
// they grow with the corpus (a million inputs are some 200 MB of entries), and
// memory must not. FileCounts summarises them; ReadManifest reads them.
//
// Run is crash-safe and idempotent: shards and manifest appear only complete, under
// their final names; running again with the same config finishes an interrupted run
// and gives byte-identical files, whatever the worker count. The rerun reads and
// encodes the corpus again (shard contents depend on everything before them) and
// keeps each shard the interrupted run completed, when it encodes to the same
// bytes and its file is intact (see JournalName), instead of writing it again.
func Run(ctx context.Context, sources []ingest.Source, cfg Config, opt Options) (*Manifest, error) {
	cfg = cfg.Resolved()
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	if err := opt.Part.Validate(); err != nil {
		return nil, err
	}
	if opt.Out == "" {
		return nil, errors.New("export: no output folder")
	}
	// A missing source fails the scan before anything is read; check it before
	// the output folder is touched.
	for _, src := range sources {
		if _, err := os.Stat(src.Path); err != nil {
			return nil, fmt.Errorf("source: %w", err)
		}
	}
	workers := opt.Workers
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	enc, err := tokenize.NewEncoder(cfg.Tokens)
	if err != nil {
		return nil, err
	}
	vocab, err := json.Marshal(enc.Vocab())
	if err != nil {
		return nil, fmt.Errorf("encode vocabulary: %w", err)
	}
	cov, err := newCoverage(cfg)
	if err != nil {
		return nil, err
	}
	buckets, err := cov.tables()
	if err != nil {
		return nil, err
	}
	var mu sync.Mutex
	var prog Progress
	report := func(f func(*Progress)) {
		if opt.Progress == nil {
			return
		}
		mu.Lock()
		defer mu.Unlock()
		f(&prog)
		opt.Progress(prog)
	}
	sp := outputSpec{
		dir: opt.Out, cfg: cfg, part: opt.Part, overwrite: opt.Overwrite, workers: workers,
		toolVersion: opt.ToolVersion, licenses: opt.Licenses,
		encoding: cfg.Tokens.Encoding, timeUnit: enc.TimeUnit(), vocabSize: enc.Vocab().Size(), maxLen: cfg.Tokens.MaxLen,
		vocabulary: vocab, buckets: buckets,
		onShard: func(Shard) { report(func(p *Progress) { p.Shards++ }) },
		onReuse: func() { report(func(p *Progress) { p.Reused++ }) },
		cpu:     make(chan struct{}, workers),
	}
	iopt := cfg.Input.Options()
	iopt.Workers = workers
	iopt.KeepDuplicates = cfg.Shards.KeepDuplicates
	iopt.Window = exportScanWindow
	p := &pipeline{cfg: cfg, part: opt.Part, workers: workers, cov: cov, cpu: sp.cpu}
	feed := func(emit func(fileResult) error) error {
		return p.run(ctx, sources, iopt, func(fr fileResult) error {
			if err := emit(fr); err != nil {
				return err
			}
			report(func(p *Progress) { p.Files++; p.Windows += int64(len(fr.rows)) })
			return nil
		})
	}
	return writeOutput(ctx, sp, feed, cov.summary)
}

// pipeline turns scan results into rows on a pool of workers and delivers them in
// scan order.
type pipeline struct {
	cfg     Config
	part    Part
	workers int
	cov     *coverage
	cpu     chan struct{} // tokens shared with the shard encoders (see outputSpec)
}

// exportScanWindow is the scan's Options.Window in an export. The stages after the
// scan are slower than parsing, so the scan's window stays full of parsed files
// waiting for their turn; four per worker keep the memory of a long export as it
// was before the scan's default grew to 16 (which measured 74 → 78 MiB at 20,000
// files, with no gain in time).
const exportScanWindow = 4

func (p *pipeline) run(ctx context.Context, sources []ingest.Source, iopt ingest.Options, emit func(fileResult) error) error {
	type job struct {
		seq int
		r   *ingest.Result
	}
	type done struct {
		seq int
		fr  fileResult
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	g, gctx := errgroup.WithContext(ctx)
	// inFlight bounds the files between the scan and emit, and so the reorder buffer.
	inFlight := make(chan struct{}, 2*p.workers)
	// Buffered (within inFlight), so a worker finds the next file waiting.
	jobs := make(chan job, 2*p.workers)
	results := make(chan done, p.workers)
	g.Go(func() error {
		defer close(jobs)
		seq := 0
		return ingest.Scan(gctx, sources, iopt, func(r *ingest.Result) error {
			select {
			case inFlight <- struct{}{}:
			case <-gctx.Done():
				return gctx.Err()
			}
			select {
			case jobs <- job{seq, r}:
				seq++
				return nil
			case <-gctx.Done():
				return gctx.Err()
			}
		})
	})
	var wg sync.WaitGroup
	for range p.workers {
		wg.Add(1)
		g.Go(func() error {
			defer wg.Done()
			enc, err := tokenize.NewEncoder(p.cfg.Tokens)
			if err != nil {
				return err
			}
			cw, err := p.cov.worker()
			if err != nil {
				return err
			}
			defer p.cov.done(cw)
			for j := range jobs {
				if err := acquire(gctx, p.cpu); err != nil {
					return err
				}
				fr, err := p.process(enc, cw, j.r)
				release(p.cpu)
				if err != nil {
					return err
				}
				select {
				case results <- done{j.seq, fr}:
				case <-gctx.Done():
					return gctx.Err()
				}
			}
			return nil
		})
	}
	go func() {
		wg.Wait()
		close(results)
	}()
	pending := map[int]fileResult{}
	next := 0
	var stopErr error
	for d := range results {
		if stopErr != nil {
			continue // drain so that the workers end
		}
		pending[d.seq] = d.fr
		for {
			fr, ok := pending[next]
			if !ok {
				break
			}
			delete(pending, next)
			next++
			<-inFlight
			if err := emit(fr); err != nil {
				stopErr = err
				cancel()
				break
			}
		}
	}
	gerr := g.Wait()
	if stopErr != nil {
		return stopErr
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	if gerr != nil {
		return gerr
	}
	if len(pending) != 0 {
		return fmt.Errorf("export: internal error: %d results left unordered at %d", len(pending), next)
	}
	return nil
}

// process encodes the pieces of one scanned file that belong to this part. A file
// whose pieces cannot be encoded is listed as skipped with the reason, and none of
// its rows are kept.
func (p *pipeline) process(enc *tokenize.Encoder, cw *coverageWorker, r *ingest.Result) (fileResult, error) {
	defer r.Release() // rows copy the tokens; nothing keeps the notes
	rec := &r.Record
	source := rec.Path
	if source == "" {
		source = rec.Source // a whole source that could not be read
	}
	fr := fileResult{entry: FileEntry{Dataset: rec.Dataset, Source: source, Status: string(rec.Status), Reason: rec.Reason}}
	if rec.Status == ingest.StatusSkipped {
		fr.entry.Class = ingest.ReasonClass(r.Err)
	}
	if rec.DuplicateOf != "" {
		fr.entry.Status = string(ingest.StatusDuplicate)
		fr.entry.Reason = fmt.Sprintf("%s duplicate of %s", rec.DuplicateKind, rec.DuplicateOf)
		if len(r.Pieces) > 0 {
			fr.entry.Reason += " (kept)"
		}
	}
	for i := range r.Pieces {
		pc := &r.Pieces[i]
		if len(pc.Notes) == 0 || !p.part.Has(pc.TransposedHash) {
			continue
		}
		split := SplitOf(pc.TransposedHash, p.cfg.Shards.Splits)
		id := fmt.Sprintf("%s#%d", rec.Key(), pc.Index)
		before := len(fr.rows)
		err := enc.Windows(pc, func(w tokenize.Window) error {
			fr.rows = append(fr.rows, rowOf(w, id, rec, pc.TransposedHash, split))
			return nil
		})
		if err != nil {
			fr.rows = nil
			fr.entry.Status = string(ingest.StatusSkipped)
			fr.entry.Reason = fmt.Sprintf("encode piece %d: %v", pc.Index, err)
			fr.entry.Class = ClassEncode
			fr.entry.Pieces, fr.entry.Windows = 0, 0
			return fr, nil
		}
		if len(fr.rows) > before {
			fr.entry.Pieces++
		}
	}
	fr.entry.Windows = int64(len(fr.rows))
	// Counted only once the whole file encoded, so a skipped file counts nothing.
	if err := cw.addRows(fr.rows); err != nil {
		return fr, err
	}
	return fr, nil
}

// ClassEncode is the FileEntry.Class of a file whose notes could not be encoded.
const ClassEncode = "encode"

// rowOf copies a window (whose tokens are valid only until the next one) into a row.
func rowOf(w tokenize.Window, piece string, rec *ingest.FileRecord, hash, split string) Row {
	n := len(w.Tokens)
	ints := make([]int32, 2*n)
	shorts := make([]int16, 2*n)
	r := Row{
		Tokens: ints[:n:n], Time: ints[n:], Pitch: shorts[:n:n], Inst: shorts[n:],
		Piece: piece, Dataset: rec.Dataset, Source: rec.Path, ContentHash: hash, Split: split,
		Window: int32(w.Index), Transpose: int32(w.Variant.Transpose), Stretch: float32(w.Variant.Stretch),
	}
	for i, t := range w.Tokens {
		r.Tokens[i], r.Time[i], r.Pitch[i], r.Inst[i] = t.ID, t.Time, t.Pitch, t.Inst
	}
	return r
}

package relpos

import (
	"context"
	"fmt"
	"hash/fnv"
	"runtime"
	"sync"

	"golang.org/x/sync/errgroup"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/tokenize"
)

// CorpusOptions say how to read and encode a corpus for counting.
type CorpusOptions struct {
	// Scan are the ingest options (Workers included); with the same options, tokens
	// config and duplicate handling as an export, the windows counted are the
	// windows it writes.
	Scan ingest.Options
	// Tokens is the encoding, window and augmentation config.
	Tokens tokenize.Config
	// Workers encode and count files at once; 0 means runtime.NumCPU(). The counts
	// are the same for every value.
	Workers int
	// Progress, when set, is called after each input file, never concurrently.
	Progress func(files, windows int64)
}

// SkippedFile is an input file whose windows were not counted, and why.
type SkippedFile struct {
	Dataset string `json:"dataset"`
	Path    string `json:"path"`
	Reason  string `json:"reason"`
}

// Corpus is the outcome of counting a corpus.
type Corpus struct {
	Counter  *Counter
	Total    *Tally
	Datasets map[string]*Tally // by dataset name
	TimeUnit string            // unit of time offsets: ms or grid
	Files    int64             // input files read
	Counted  int64             // files whose windows were counted
	// Duplicates are files not counted because they duplicate an earlier one (unless
	// kept, see ingest.Options.KeepDuplicates).
	Duplicates int64
	Skipped    []SkippedFile // in scan order
}

// Report returns the coverage report of the corpus, with the per-dataset breakdown.
func (c *Corpus) Report() *Report {
	return c.Counter.ReportDatasets(c.Total, c.Datasets, c.TimeUnit)
}

// CountCorpus scans the sources (ingest.Scan), encodes every piece with notes of every
// kept file into windows (tokenize.Encoder.Windows, the windows export writes) and
// counts their pairs: exactly, or sampled when cfg.Sample is set. A file whose pieces
// fail to encode is skipped whole, as export skips it. The counts do not depend on
// the number of workers.
func CountCorpus(ctx context.Context, sources []ingest.Source, cfg Config, opt CorpusOptions) (*Corpus, error) {
	first, err := NewCounter(cfg)
	if err != nil {
		return nil, err
	}
	enc, err := tokenize.NewEncoder(opt.Tokens)
	if err != nil {
		return nil, err
	}
	workers := opt.Workers
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	out := &Corpus{Counter: first, Total: first.NewTally(), Datasets: map[string]*Tally{}, TimeUnit: enc.TimeUnit()}

	type job struct {
		seq int
		r   *ingest.Result
	}
	g, gctx := errgroup.WithContext(ctx)
	jobs := make(chan job, workers)
	g.Go(func() error {
		defer close(jobs)
		seq := 0
		return ingest.Scan(gctx, sources, opt.Scan, func(r *ingest.Result) error {
			select {
			case jobs <- job{seq, r}:
				seq++
				return nil
			case <-gctx.Done():
				return gctx.Err()
			}
		})
	})
	var mu sync.Mutex
	var windows int64
	skipped := map[int]SkippedFile{}
	for range workers {
		g.Go(func() error {
			counter, err := NewCounter(cfg)
			if err != nil {
				return err
			}
			enc, err := tokenize.NewEncoder(opt.Tokens)
			if err != nil {
				return err
			}
			for j := range jobs {
				d := countFile(counter, enc, j.r)
				j.r.Release()
				mu.Lock()
				out.Files++
				if d.skipped != nil {
					skipped[j.seq] = *d.skipped
				}
				if d.dup {
					out.Duplicates++
				}
				if d.tally != nil {
					out.Counted++
					windows += d.tally.Windows
					out.Total.Add(d.tally)
					ds := out.Datasets[d.dataset]
					if ds == nil {
						ds = first.NewTally()
						out.Datasets[d.dataset] = ds
					}
					ds.Add(d.tally)
				}
				if opt.Progress != nil {
					opt.Progress(out.Files, windows)
				}
				mu.Unlock()
			}
			return nil
		})
	}
	if err := g.Wait(); err != nil {
		return nil, err
	}
	for seq := range out.Files {
		if s, ok := skipped[int(seq)]; ok {
			out.Skipped = append(out.Skipped, s)
		}
	}
	return out, nil
}

// fileOutcome is what counting one scanned file gave.
type fileOutcome struct {
	dataset string
	tally   *Tally
	skipped *SkippedFile
	dup     bool
}

// countFile counts the windows of one scanned file into a fresh tally, so that a file
// that fails half-way adds nothing.
func countFile(c *Counter, enc *tokenize.Encoder, r *ingest.Result) (d fileOutcome) {
	rec := &r.Record
	d.dataset = rec.Dataset
	if r.Err != nil || rec.Status == ingest.StatusSkipped {
		reason := rec.Reason
		if reason == "" && r.Err != nil {
			reason = r.Err.Error()
		}
		d.skipped = &SkippedFile{Dataset: rec.Dataset, Path: rec.Path, Reason: reason}
		return d
	}
	if len(r.Pieces) == 0 {
		d.dup = rec.DuplicateOf != ""
		return d
	}
	t := c.NewTally()
	for i := range r.Pieces {
		pc := &r.Pieces[i]
		if len(pc.Notes) == 0 {
			continue
		}
		err := enc.Windows(pc, func(w tokenize.Window) error {
			if t.sampled {
				return c.Sample(t, w.Tokens, windowKey(rec, pc.Index, w))
			}
			return c.Count(t, w.Tokens)
		})
		if err != nil {
			d.skipped = &SkippedFile{Dataset: rec.Dataset, Path: rec.Path, Reason: fmt.Sprintf("encode piece %d: %v", pc.Index, err)}
			return d
		}
	}
	d.tally = t
	return d
}

// windowKey identifies a window for sampling: its file, piece, variant and index.
func windowKey(rec *ingest.FileRecord, piece int, w tokenize.Window) uint64 {
	h := fnv.New64a()
	fmt.Fprintf(h, "%s\x00%d\x00%s\x00%d", rec.Key(), piece, w.Variant, w.Index)
	return h.Sum64()
}

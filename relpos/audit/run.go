package audit

import (
	"context"
	"fmt"
	"runtime"
	"strings"

	"golang.org/x/sync/errgroup"

	"github.com/relshard/relshard/ingest"
)

// Run scans the sources with ingest.Scan and audits every piece of every file that
// is ok, on cfg.Workers workers. Each source is a dataset; with cfg.ByFolder and a
// single source whose dataset is not named, each top-level folder of it is one. The
// report is the same for any number of workers.
func Run(ctx context.Context, sources []ingest.Source, cfg Config) (*Report, error) {
	if len(sources) == 0 {
		return nil, fmt.Errorf("audit: no sources")
	}
	records, err := New(cfg)
	if err != nil {
		return nil, err
	}
	workers := cfg.Workers
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	auditors := make([]*Auditor, workers)
	for i := range auditors {
		if auditors[i], err = New(cfg); err != nil {
			return nil, err
		}
	}
	byFolder := cfg.ByFolder && len(sources) == 1 && sources[0].Dataset == ""

	type job struct {
		seq     int64
		dataset string
		r       *ingest.Result
	}
	jobs := make(chan job, 2*workers)
	g, gctx := errgroup.WithContext(ctx)
	for _, a := range auditors {
		g.Go(func() error {
			for j := range jobs {
				for i := range j.r.Pieces {
					if err := a.addPiece(j.seq<<16|int64(i&0xffff), j.dataset, j.r.Record.Path, &j.r.Pieces[i]); err != nil {
						return err
					}
				}
				j.r.Release()
			}
			return nil
		})
	}
	g.Go(func() error {
		defer close(jobs)
		var seq int64
		return ingest.Scan(gctx, sources, cfg.Scan, func(r *ingest.Result) error {
			ds := datasetOf(&r.Record, byFolder)
			records.AddRecord(ds, &r.Record)
			seq++
			if cfg.Progress != nil {
				cfg.Progress(seq)
			}
			if len(r.Pieces) == 0 {
				return nil
			}
			select {
			case jobs <- job{seq: seq, dataset: ds, r: r}:
				return nil
			case <-gctx.Done():
				return gctx.Err()
			}
		})
	})
	if err := g.Wait(); err != nil {
		return nil, fmt.Errorf("audit: %w", err)
	}
	for _, a := range auditors {
		records.Merge(a)
	}
	return records.Report(), nil
}

// datasetOf names the dataset of a file: its source's, or with byFolder the first
// folder of its path inside the source.
func datasetOf(rec *ingest.FileRecord, byFolder bool) string {
	if byFolder {
		if dir, _, ok := strings.Cut(rec.Path, "/"); ok && dir != "" {
			return dir
		}
	}
	return rec.Dataset
}

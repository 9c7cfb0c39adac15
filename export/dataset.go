package export

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"sync"

	"golang.org/x/sync/errgroup"
)

// datasetWriter cuts a stream of rows, given in a deterministic order, into
// shards per split and writes full shards on up to workers goroutines. Where a
// shard is cut depends only on the rows before it, never on timing, so the files
// are the same for every worker count. Memory is bounded by one open shard per
// split plus one shard per writing worker (less: a shard being written drops
// each row group once it is encoded).
type datasetWriter struct {
	dir     string
	part    Part
	rows    int64 // shard row target, or 0
	bytes   int64 // shard payload target when rows is 0
	opt     ShardOptions
	g       *errgroup.Group
	ctx     context.Context
	slots   chan struct{}
	open    map[string]*openShard
	seq     map[string]int
	onShard func(Shard) // called after each shard is written, serialized
	onReuse func()      // called after each shard kept from an interrupted run, serialized
	journal *journal    // nil: every shard is written
	mu      sync.Mutex
	shards  []numbered
}

type numbered struct {
	Shard
	seq int
}

type openShard struct {
	rows  []Row
	bytes int64
}

func newDatasetWriter(ctx context.Context, dir string, part Part, s Settings, opt ShardOptions, workers int, onShard func(Shard)) *datasetWriter {
	if workers < 1 {
		workers = 1
	}
	g, gctx := errgroup.WithContext(ctx)
	return &datasetWriter{
		dir: dir, part: part, rows: s.Rows, bytes: s.shardBytes(), opt: opt,
		g: g, ctx: gctx, slots: make(chan struct{}, workers),
		open: map[string]*openShard{}, seq: map[string]int{}, onShard: onShard,
	}
}

// add appends one row (taking ownership of its slices) to its split's open
// shard, and hands the shard to a writer when it is full. It blocks while every
// writer is busy.
func (w *datasetWriter) add(r Row) error {
	o := w.open[r.Split]
	if o == nil {
		o = &openShard{}
		w.open[r.Split] = o
	}
	o.rows = append(o.rows, r)
	o.bytes += r.payloadBytes()
	if (w.rows > 0 && int64(len(o.rows)) >= w.rows) || (w.rows == 0 && o.bytes >= w.bytes) {
		return w.cut(r.Split)
	}
	return nil
}

func (w *datasetWriter) cut(split string) error {
	o := w.open[split]
	if o == nil || len(o.rows) == 0 {
		return nil
	}
	delete(w.open, split)
	rel := shardName(split, w.part, w.seq[split])
	w.seq[split]++
	select {
	case w.slots <- struct{}{}:
	case <-w.ctx.Done():
		err := w.g.Wait()
		if err == nil {
			err = w.ctx.Err()
		}
		return err
	}
	seq := w.seq[split] - 1
	opt := w.opt
	opt.Metadata = withSplit(opt.Metadata, split)
	w.g.Go(func() error {
		defer func() { <-w.slots }()
		if err := w.ctx.Err(); err != nil {
			return err
		}
		p := filepath.Join(w.dir, filepath.FromSlash(rel))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			return fmt.Errorf("create %s folder: %w", split, err)
		}
		var digest string
		reused := false
		var sh Shard
		if w.journal != nil {
			digest = shardDigest(o.rows, opt)
			sh, reused = w.journal.reuse(rel, digest)
		}
		if !reused {
			var err error
			if sh, err = writeShard(p, o.rows, opt, true); err != nil {
				return err
			}
			sh.Path, sh.Split = rel, split
			if w.journal != nil {
				if err := w.journal.record(digest, sh); err != nil {
					return err
				}
			}
		}
		w.mu.Lock()
		if reused && w.onReuse != nil {
			w.onReuse()
		}
		w.shards = append(w.shards, numbered{sh, seq})
		if w.onShard != nil {
			w.onShard(sh)
		}
		w.mu.Unlock()
		return nil
	})
	return nil
}

// finish writes the open shards, waits for every writer, and returns the shards
// in manifest order: by split, then by number.
func (w *datasetWriter) finish() ([]Shard, error) {
	for _, s := range Splits {
		if err := w.cut(s); err != nil {
			break
		}
	}
	if err := w.g.Wait(); err != nil {
		return nil, err
	}
	order := map[string]int{}
	for i, s := range Splits {
		order[s] = i
	}
	slices.SortFunc(w.shards, func(a, b numbered) int {
		if d := order[a.Split] - order[b.Split]; d != 0 {
			return d
		}
		return a.seq - b.seq
	})
	out := make([]Shard, len(w.shards))
	for i, n := range w.shards {
		out[i] = n.Shard
	}
	return out, nil
}

// abort stops and waits for the writers after a failure elsewhere.
func (w *datasetWriter) abort() { _ = w.g.Wait() }

func withSplit(meta map[string]string, split string) map[string]string {
	m := make(map[string]string, len(meta)+1)
	for k, v := range meta {
		m[k] = v
	}
	m[MetaSplit] = split
	return m
}

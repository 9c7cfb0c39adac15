package export

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"

	"golang.org/x/sync/errgroup"
)

// datasetWriter cuts a stream of rows, given in a deterministic order, into
// shards per split, and the shards into row groups. Each shard is encoded on its
// own goroutine while its rows arrive, in batches of writeBatch rows, so encoding
// and compression overlap the work upstream and the splits are encoded in
// parallel. Where shards, row groups and batches are cut depends only on the rows
// before them, never on timing, so the files are the same for every worker count.
// Memory is bounded by a few batches of rows plus the compressed pages of one row
// group per open shard, whatever the shard size and the corpus size.
type datasetWriter struct {
	dir      string
	part     Part
	rows     int64 // shard row target, or 0
	bytes    int64 // shard payload target when rows is 0
	group    int64 // row-group payload target
	opt      ShardOptions
	g        *errgroup.Group
	ctx      context.Context
	cancel   context.CancelFunc
	slots    chan struct{} // bounds the shards open or finishing at once
	streams  map[string]*splitStream
	onShard  func(Shard)        // called after each shard is written, serialized
	onReuse  func()             // called after each shard kept from an interrupted run, serialized
	onEncode func(replayed int) // called when a shard's encoder starts, with the batches read back (tests)
	journal  *journal           // nil: every shard is written
	cpu      chan struct{}      // nil, or tokens shared with the stages upstream (see outputSpec)
	mu       sync.Mutex
	shards   []numbered
}

type numbered struct {
	Shard
	seq int
}

// splitStream is the open shard of one split, as seen by the goroutine calling add.
// rowBatch is up to writeBatch rows of a shard, counted from the start of their
// row group; end closes the group.
type rowBatch struct {
	rows []Row
	end  bool
}

type splitStream struct {
	seq        int           // number of the next shard
	batches    chan rowBatch // to the open shard's encoder; nil when none is open
	batch      []Row         // rows not yet handed over
	groupBytes int64         // payload of the open row group
	rows       int64         // rows of the open shard
	bytes      int64         // payload of the open shard
}

func newDatasetWriter(ctx context.Context, dir string, part Part, s Settings, opt ShardOptions, workers int, onShard func(Shard)) *datasetWriter {
	if workers < 1 {
		workers = 1
	}
	ctx, cancel := context.WithCancel(ctx)
	g, gctx := errgroup.WithContext(ctx)
	return &datasetWriter{cancel: cancel,
		dir: dir, part: part, rows: s.Rows, bytes: s.shardBytes(), group: opt.rowGroupBytes(), opt: opt,
		// One open shard per split must always fit, or a split could wait for a
		// slot that only its own rows would free.
		g: g, ctx: gctx, slots: make(chan struct{}, len(Splits)+workers),
		streams: map[string]*splitStream{}, onShard: onShard,
	}
}

// add appends one row (taking ownership of its slices) to its split's open
// shard, hands a batch of rows to the shard's encoder when it is full or ends a
// row group, and closes the shard when it is full. It blocks while the encoder
// is busy.
func (w *datasetWriter) add(r Row) error {
	s := w.streams[r.Split]
	if s == nil {
		s = &splitStream{}
		w.streams[r.Split] = s
	}
	if s.batches == nil {
		if err := w.open(r.Split, s); err != nil {
			return err
		}
	}
	n := r.payloadBytes()
	s.batch = append(s.batch, r)
	s.groupBytes += n
	s.rows++
	s.bytes += n
	full := (w.rows > 0 && s.rows >= w.rows) || (w.rows == 0 && s.bytes >= w.bytes)
	if end := full || s.groupBytes >= w.group; end || len(s.batch) == writeBatch {
		if err := w.send(s, end); err != nil {
			return err
		}
	}
	if full {
		w.closeShard(s)
	}
	return nil
}

// failed returns the error that stopped the writers.
func (w *datasetWriter) failed() error {
	err := w.g.Wait()
	if err == nil {
		err = w.ctx.Err()
	}
	return err
}

// open starts the encoder of the split's next shard.
func (w *datasetWriter) open(split string, s *splitStream) error {
	select {
	case w.slots <- struct{}{}:
	case <-w.ctx.Done():
		return w.failed()
	}
	seq := s.seq
	s.seq++
	rel := shardName(split, w.part, seq)
	batches := make(chan rowBatch, 2)
	s.batches = batches
	opt := w.opt
	opt.Metadata = withSplit(opt.Metadata, split)
	w.g.Go(func() error {
		defer func() { <-w.slots }()
		sh, reused, err := w.encode(rel, split, batches, opt)
		if err != nil {
			return err
		}
		w.mu.Lock()
		defer w.mu.Unlock()
		if reused && w.onReuse != nil {
			w.onReuse()
		}
		w.shards = append(w.shards, numbered{sh, seq})
		if w.onShard != nil {
			w.onShard(sh)
		}
		return nil
	})
	return nil
}

// send hands the rows not yet handed over to the open shard's encoder; end
// closes their row group.
func (w *datasetWriter) send(s *splitStream, end bool) error {
	if len(s.batch) == 0 && (!end || s.groupBytes == 0) {
		return nil // nothing since the last batch, or the group already ended
	}
	select {
	case s.batches <- rowBatch{s.batch, end}:
	case <-w.ctx.Done():
		return w.failed()
	}
	s.batch = make([]Row, 0, writeBatch)
	if end {
		s.groupBytes = 0
	}
	return nil
}

// closeShard ends the open shard: its encoder writes the footer and commits it.
func (w *datasetWriter) closeShard(s *splitStream) {
	close(s.batches)
	s.batches = nil
	s.rows, s.bytes = 0, 0
}

// encode writes the batches of rows received as the shard rel, and commits it
// when batches is closed.
//
// A shard that the interrupted run of the same config completed (the file intact,
// its batches in the journal, written by a build and options of the same identity)
// is not encoded while this run's batches have the digests of that run's, in
// order: if all of them do, the file on disk is kept and reused is true, since
// shard bytes follow from their batches alone. Where they part, the batches before
// are read back from the file and encoded again, and the shard is written as any
// other. Any other shard of the journal is encoded and kept when the bytes come
// out the same.
func (w *datasetWriter) encode(rel, split string, batches <-chan rowBatch, opt ShardOptions) (sh Shard, reused bool, err error) {
	p := filepath.Join(w.dir, filepath.FromSlash(rel))
	sh = Shard{Path: rel, Split: split}
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		return sh, false, fmt.Errorf("create %s folder: %w", split, err)
	}
	if opt.SpillDir == "" {
		opt.SpillDir = filepath.Dir(p)
	}
	var (
		sf        *shardFile
		enc       *shardEncoder
		committed bool
		dg        = newBatchDigester()
		done      []journalBatch // this run's batches so far
	)
	defer func() {
		if enc != nil {
			enc.release()
		}
		if sf != nil && !committed {
			sf.discard()
		}
	}()
	// start opens the file and the encoder, and encodes again the batches kept
	// so far, read back from the interrupted run's file.
	start := func() error {
		var err error
		if sf, err = createShardFile(p); err != nil {
			return err
		}
		if enc, err = newShardEncoder(sf, opt); err != nil {
			return err
		}
		if err := replay(p, enc, done, dg); err != nil {
			return err
		}
		if w.onEncode != nil {
			w.onEncode(len(done))
		}
		return nil
	}
	writer := opt.identity()
	prev, checking := w.journal.candidate(rel, writer)
	if !checking {
		if err := start(); err != nil {
			return sh, false, err
		}
	}
	for {
		var b rowBatch
		var ok bool
		select {
		case b, ok = <-batches:
		case <-w.ctx.Done():
			return sh, false, w.ctx.Err()
		}
		if !ok {
			break
		}
		for i := range b.rows {
			sh.Tokens += int64(len(b.rows[i].Tokens))
		}
		if err := acquire(w.ctx, w.cpu); err != nil {
			return sh, false, err
		}
		jb := journalBatch{Rows: len(b.rows), End: b.end, Digest: dg.digest(b.rows, b.end)}
		var err error
		if checking {
			if k := len(done); k < len(prev.Batches) && prev.Batches[k] == jb {
				release(w.cpu)
				done = append(done, jb)
				sh.Rows += int64(len(b.rows))
				clear(b.rows)
				continue
			}
			checking = false
			err = start()
		}
		if err == nil {
			if err = enc.write(b.rows); err != nil {
				err = fmt.Errorf("write shard %s: rows %d-%d: %w", rel, sh.Rows, sh.Rows+int64(len(b.rows))-1, err)
			} else if b.end {
				if err = enc.flush(); err != nil {
					err = fmt.Errorf("write shard %s: %w", rel, err)
				}
			}
		}
		release(w.cpu)
		if err != nil {
			return sh, false, err
		}
		done = append(done, jb)
		sh.Rows += int64(len(b.rows))
		clear(b.rows) // the writer holds copies; let the rows' slices go
	}
	if err := acquire(w.ctx, w.cpu); err != nil {
		return sh, false, err
	}
	if checking && len(done) == len(prev.Batches) {
		release(w.cpu)
		return prev.Shard, true, nil
	}
	if checking {
		err = start() // fewer batches than the interrupted run's shard
	}
	if err == nil {
		err = enc.close()
	}
	release(w.cpu)
	if err != nil {
		return sh, false, fmt.Errorf("write shard %s: %w", rel, err)
	}
	if w.journal != nil {
		n, sum, err := sf.sum()
		if err != nil {
			return sh, false, err
		}
		if prev, ok := w.journal.reuse(rel, sum, n); ok {
			return prev, true, nil // the deferred discard removes the copy
		}
	}
	if sh.Bytes, sh.SHA256, err = sf.commit(); err != nil {
		return sh, false, err
	}
	committed = true
	if w.journal != nil {
		if err := w.journal.record(sh.SHA256, sh, writer, done); err != nil {
			return sh, false, err
		}
	}
	return sh, false, nil
}

// errReplayed stops reading a shard back once the batches to replay are encoded.
var errReplayed = errors.New("replayed")

// replay encodes into enc the first len(batches) batches of the shard file at
// path, written by an interrupted run: the batches of this run that matched that
// run's before they parted. Their rows are read back from the file, and each batch
// read must have the digest it was recorded with.
func replay(path string, enc *shardEncoder, batches []journalBatch, dg *batchDigester) error {
	if len(batches) == 0 {
		return nil
	}
	k := 0
	cur := make([]Row, 0, writeBatch)
	err := readRows(path, func(rows []Row) error {
		for i := range rows {
			cur = append(cur, cloneRow(&rows[i])) // readRows reuses its rows
			b := batches[k]
			if len(cur) < b.Rows {
				continue
			}
			if dg.digest(cur, b.End) != b.Digest {
				return fmt.Errorf("batch %d read back is not the batch recorded", k)
			}
			if err := enc.write(cur); err != nil {
				return err
			}
			if b.End {
				if err := enc.flush(); err != nil {
					return err
				}
			}
			cur = cur[:0]
			if k++; k == len(batches) {
				return errReplayed
			}
		}
		return nil
	})
	switch {
	case errors.Is(err, errReplayed):
		return nil
	case err == nil:
		err = fmt.Errorf("the file ends after %d of %d batches", k, len(batches))
	}
	return fmt.Errorf("resume: encode again the rows kept in %s: %w", filepath.Base(path), err)
}

// cloneRow returns a copy of r that shares no memory with it.
func cloneRow(r *Row) Row {
	c := *r
	c.Tokens, c.Time = slices.Clone(r.Tokens), slices.Clone(r.Time)
	c.Pitch, c.Inst = slices.Clone(r.Pitch), slices.Clone(r.Inst)
	c.Piece, c.Dataset, c.Source = strings.Clone(r.Piece), strings.Clone(r.Dataset), strings.Clone(r.Source)
	c.ContentHash, c.Split = strings.Clone(r.ContentHash), strings.Clone(r.Split)
	return c
}

// finish writes the open shards, waits for every writer, and returns the shards
// in manifest order: by split, then by number.
func (w *datasetWriter) finish() ([]Shard, error) {
	for _, split := range Splits {
		s := w.streams[split]
		if s == nil || s.batches == nil {
			continue
		}
		if err := w.send(s, true); err != nil {
			break
		}
		w.closeShard(s)
	}
	err := w.g.Wait()
	w.cancel()
	if err != nil {
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

// abort stops and waits for the writers after a failure elsewhere. The open
// shards are abandoned, never committed: their rows are incomplete.
func (w *datasetWriter) abort() {
	w.cancel()
	_ = w.g.Wait()
}

// acquire takes a token from cpu (nil: no bound), or returns when ctx ends.
func acquire(ctx context.Context, cpu chan struct{}) error {
	if cpu == nil {
		return nil
	}
	select {
	case cpu <- struct{}{}:
		return nil
	case <-ctx.Done():
		return ctx.Err()
	}
}

// release returns a token taken by acquire.
func release(cpu chan struct{}) {
	if cpu != nil {
		<-cpu
	}
}

func withSplit(meta map[string]string, split string) map[string]string {
	m := make(map[string]string, len(meta)+1)
	for k, v := range meta {
		m[k] = v
	}
	m[MetaSplit] = split
	return m
}

package export

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
)

// outputSpec is everything the output stage needs besides the rows.
type outputSpec struct {
	dir         string
	cfg         Config
	part        Part
	overwrite   bool
	workers     int
	toolVersion string
	licenses    map[string]string
	encoding    string
	timeUnit    string
	vocabSize   int
	maxLen      int
	vocabulary  json.RawMessage
	buckets     json.RawMessage
	onShard     func(Shard)
	onReuse     func()
	onEncode    func(replayed int) // see datasetWriter.onEncode
	// cpu, when set, is shared with the stages upstream: a shard encoder holds
	// a token while it encodes a batch, so that the run as a whole keeps about
	// workers cores busy, not workers plus one per open shard.
	cpu chan struct{}
}

// fileResult is what the pipeline hands the output stage for one input file, in
// scan order: its manifest entry and its rows (pieces kept, all windows).
type fileResult struct {
	entry FileEntry
	rows  []Row
}

// writeOutput claims the folder, writes the rows that feed emits as shards, and
// writes the manifest last. coverage is called after the last row to obtain the
// coverage summary. feed must call emit in a deterministic order.
func writeOutput(ctx context.Context, sp outputSpec, feed func(emit func(fileResult) error) error, coverage func() (json.RawMessage, error)) (*Manifest, error) {
	hash := sp.cfg.Hash()
	mk := marker{Format: ManifestKind, ConfigHash: hash}
	if !sp.part.Whole() {
		p := sp.part
		mk.Part = &p
	}
	resume, err := prepareOut(sp.dir, mk, sp.overwrite)
	if err != nil {
		return nil, err
	}
	jr, err := openJournal(sp.dir, resume)
	if err != nil {
		return nil, err
	}
	defer jr.close()
	opt := ShardOptions{
		Compression:   sp.cfg.Shards.Compression,
		RowGroupBytes: sp.cfg.Shards.rowGroupBytes(),
		CreatedBy:     "relshard " + sp.toolVersion,
		Metadata: map[string]string{
			MetaSchemaVersion: strconv.Itoa(SchemaVersion),
			MetaEncoding:      sp.encoding,
			MetaVocabulary:    string(sp.vocabulary),
			MetaBuckets:       string(sp.buckets),
			MetaTimeUnit:      sp.timeUnit,
			MetaConfigHash:    hash,
			MetaToolVersion:   sp.toolVersion,
		},
	}
	dw := newDatasetWriter(ctx, sp.dir, sp.part, sp.cfg.Shards, opt, sp.workers, sp.onShard)
	dw.journal, dw.onReuse, dw.onEncode, dw.cpu = jr, sp.onReuse, sp.onEncode, sp.cpu
	spool, err := newEntrySpool(sp.dir)
	if err != nil {
		dw.abort()
		return nil, err
	}
	defer spool.close()
	splitPieces := map[string]int64{}
	err = feed(func(fr fileResult) error {
		if err := spool.add(fr.entry); err != nil {
			return err
		}
		seen := map[string]bool{}
		for _, r := range fr.rows {
			if !seen[r.Piece] {
				splitPieces[r.Split]++
				seen[r.Piece] = true
			}
			if err := dw.add(r); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		dw.abort()
		return nil, err
	}
	shards, err := dw.finish()
	if err != nil {
		return nil, err
	}
	cov, err := coverage()
	if err != nil {
		return nil, err
	}
	keep := map[string]bool{}
	for _, sh := range shards {
		keep[sh.Path] = true
	}
	// Shards a previous run of the same config made beyond this run's (the
	// inputs changed) would otherwise linger unlisted.
	if err := removeShardFiles(sp.dir, keep); err != nil {
		return nil, err
	}
	m := &Manifest{
		Format:        ManifestKind,
		SchemaVersion: SchemaVersion,
		ToolVersion:   sp.toolVersion,
		ConfigHash:    hash,
		Config:        sp.cfg,
		Part:          mk.Part,
		Encoding:      sp.encoding,
		TimeUnit:      sp.timeUnit,
		VocabSize:     sp.vocabSize,
		MaxLen:        sp.maxLen,
		Vocabulary:    sp.vocabulary,
		Buckets:       sp.buckets,
		Coverage:      cov,
		Licenses:      sp.licenses,
		Shards:        shards,
	}
	if m.Shards == nil {
		m.Shards = []Shard{}
	}
	m.recount(splitPieces)
	spool.tally.addTo(&m.Totals)
	if err := commitManifest(sp.dir, m, spool); err != nil {
		return nil, err
	}
	counts := spool.tally.counts()
	m.counts = &counts
	return m, nil
}

// commitManifest makes the shards durable, writes the manifest (atomically, last)
// and removes the run marker. With spool, the manifest's files come from it.
func commitManifest(dir string, m *Manifest, spool *entrySpool) error {
	for _, s := range Splits {
		if err := syncDir(filepath.Join(dir, s)); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return err
		}
	}
	write := func(w io.Writer) error {
		if spool != nil {
			return m.encodeSpooled(w, spool)
		}
		data, err := m.Encode()
		if err != nil {
			return err
		}
		_, err = w.Write(data)
		return err
	}
	if err := writeFileAtomicFunc(filepath.Join(dir, ManifestName), write); err != nil {
		return fmt.Errorf("write manifest: %w", err)
	}
	if err := removeJournal(dir); err != nil {
		return err
	}
	if err := os.Remove(filepath.Join(dir, MarkerName)); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return fmt.Errorf("remove run marker: %w", err)
	}
	return syncDir(dir)
}

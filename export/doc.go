// Package export writes a corpus as Parquet training shards with a manifest, and
// checks and merges such datasets.
//
// Run is the whole pipeline: ingest.Scan reads and deduplicates the sources, every
// kept piece is cut into windows by a tokenize.Encoder, their relative-position
// coverage is counted (relpos), and the windows are written as shards, one Row
// per window, then manifest.json. A dataset folder looks like
//
//	manifest.json                 written last: its presence means complete
//	train/train-000000.parquet    shards of a split, numbered from 0
//	validation/validation-000000.parquet
//	test/test-000000.parquet
//	train/train-p2-000000.parquet a shard written by part 2 of a run in parts
//
// Splits come from a piece's transposition-invariant content hash (SplitOf), so
// every window, augmentation and duplicate of a piece share a split, and a piece
// keeps its split as the corpus grows. Parts of a run spread over machines
// (Options.Part) are chosen from the same hash (PartOf), salted apart from the
// split; Merge joins them.
//
// Output is deterministic: shard boundaries depend only on the rows before them,
// so the same inputs and Config give byte-identical files for any worker count,
// and nothing in the manifest is a timestamp. Files appear only complete (written
// under a temporary name, synced and renamed), so a killed run is finished by
// running it again; the rerun keeps the shards the killed run completed (listed
// in .relshard-journal.jsonl while a run is unfinished, with digests of the row
// batches they were encoded from, so that a kept shard is not encoded again).
// Verify reads a dataset back and lists its problems.
//
// Memory does not depend on the shard size or the corpus size: each open shard
// is encoded while its rows arrive, a batch of rows and the compressed pages of
// one row group at a time, plus a few input files per worker.
//
//	m, err := export.Run(ctx, []ingest.Source{{Path: "midi/"}}, export.DefaultConfig(),
//		export.Options{Out: "shards/", ToolVersion: "v1"})
//	// m.Totals.Windows == rows written; m.Shards[0].Path == "train/train-000000.parquet"
//	problems, err := export.Verify(ctx, "shards/") // none for a sound dataset
package export

package export

import (
	"bufio"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"hash"
	"io"
	"maps"
	"os"
	"path/filepath"
	"runtime/debug"
	"slices"

	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/compress"
	"github.com/parquet-go/parquet-go/compress/snappy"
	"github.com/parquet-go/parquet-go/compress/uncompressed"
	"github.com/parquet-go/parquet-go/compress/zstd"
)

// Compression names accepted in Settings.Compression.
const (
	CompressionZstd   = "zstd"
	CompressionSnappy = "snappy"
	CompressionNone   = "none"
)

// codecs are shared: parquet-go codecs pool their encoders and are safe for
// concurrent use. Zstandard stays at its default level: the fastest level
// compressed about twice as fast for shards about 4 % larger, but its encoders
// held about twice the heap (see the contributor guide's profile notes).
var codecs = map[string]compress.Codec{
	CompressionZstd:   newZstdCodec(zstd.DefaultLevel),
	CompressionSnappy: &snappy.Codec{},
	CompressionNone:   &uncompressed.Codec{},
}

// ShardOptions control how one shard file is encoded.
type ShardOptions struct {
	// Compression is CompressionZstd (the default when empty), CompressionSnappy
	// or CompressionNone.
	Compression string
	// RowGroupBytes is the target uncompressed payload of one row group; a group
	// is closed at the first row that reaches it. Zero means DefaultRowGroupBytes.
	RowGroupBytes int64
	// Metadata is written as the file's key-value metadata (sorted by key).
	Metadata map[string]string
	// CreatedBy names the writing application in the footer, e.g. "relshard v1.0".
	CreatedBy string
	// SpillDir, when set, keeps the compressed pages of the open row group in
	// temporary files in that folder instead of memory, so that the memory of a
	// writer does not grow with the row-group size. The files are unlinked at once
	// where the system allows, else named "pages-*" with TempSuffix and removed when
	// the shard ends. The bytes written are the same either way. Run spills into
	// each shard's folder.
	SpillDir string
}

// DefaultRowGroupBytes is the default row-group target: small enough that a
// shuffling loader holding a few row groups per worker stays within a few
// hundred megabytes, large enough that per-group overhead stays negligible.
const DefaultRowGroupBytes = 16 << 20

// Shard describes one written shard file, as listed in the manifest.
type Shard struct {
	Path   string `json:"path"`   // slash-separated, relative to the dataset folder
	Split  string `json:"split"`  // split of every row
	Rows   int64  `json:"rows"`   // rows (windows)
	Tokens int64  `json:"tokens"` // sum of the rows' token counts
	Bytes  int64  `json:"bytes"`  // file size
	SHA256 string `json:"sha256"` // hex SHA-256 of the file
}

// WriteShard writes rows as one Parquet file at path, crash-safely: the data goes
// to a temporary name in the same folder (see TempSuffix), is synced, and is
// renamed to path only when complete, so path never holds a partial file. The
// returned Shard has the path as given (callers make it relative).
func WriteShard(path string, rows []Row, opt ShardOptions) (Shard, error) {
	return writeShard(path, rows, opt, false)
}

// writeShard is WriteShard; with release, each row is cleared once its row group
// is encoded, so a shard's memory shrinks while it is written.
func writeShard(path string, rows []Row, opt ShardOptions, release bool) (Shard, error) {
	sh := Shard{Path: path, Rows: int64(len(rows))}
	if len(rows) > 0 {
		sh.Split = rows[0].Split
	}
	for i := range rows {
		sh.Tokens += int64(len(rows[i].Tokens))
	}
	sf, err := createShardFile(path)
	if err != nil {
		return sh, err
	}
	if err := encodeShard(sf, rows, opt, release); err != nil {
		sf.discard()
		return sh, fmt.Errorf("write shard %s: %w", filepath.Base(path), err)
	}
	if sh.Bytes, sh.SHA256, err = sf.commit(); err != nil {
		return sh, err
	}
	return sh, nil
}

// shardFile is a shard being written under its temporary name, hashed and
// counted on the way.
type shardFile struct {
	path, tmp string
	f         *os.File
	h         hash.Hash
	cw        *countWriter
	bw        *bufio.Writer
}

func createShardFile(path string) (*shardFile, error) {
	tmp := path + TempSuffix
	f, err := os.OpenFile(tmp, os.O_CREATE|os.O_TRUNC|os.O_WRONLY, 0o644)
	if err != nil {
		return nil, fmt.Errorf("create shard: %w", err)
	}
	sf := &shardFile{path: path, tmp: tmp, f: f, h: sha256.New()}
	sf.cw = &countWriter{w: io.MultiWriter(f, sf.h)}
	sf.bw = bufio.NewWriterSize(sf.cw, 128<<10)
	return sf, nil
}

func (s *shardFile) Write(p []byte) (int, error) { return s.bw.Write(p) }

// sum flushes the buffer and returns the size and hex SHA-256 of the file so far.
func (s *shardFile) sum() (int64, string, error) {
	if err := s.bw.Flush(); err != nil {
		return 0, "", fmt.Errorf("write shard %s: %w", filepath.Base(s.path), err)
	}
	return s.cw.n, hex.EncodeToString(s.h.Sum(nil)), nil
}

// commit makes the file durable (synced before the rename, so the final name
// never holds a partial file) and renames it to its final name.
func (s *shardFile) commit() (int64, string, error) {
	n, sum, err := s.sum()
	if err == nil {
		err = s.f.Sync()
	}
	if cerr := s.f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Rename(s.tmp, s.path)
	}
	if err != nil {
		os.Remove(s.tmp)
		return 0, "", fmt.Errorf("write shard %s: %w", filepath.Base(s.path), err)
	}
	return n, sum, nil
}

// discard abandons the file.
func (s *shardFile) discard() {
	s.f.Close()
	os.Remove(s.tmp)
}

// TempSuffix ends the name of every file being written; such a file is never
// complete and a rerun removes it.
const TempSuffix = ".partial"

// EncodeShard writes rows as one Parquet file to w. It is what WriteShard does
// inside its temporary file, for callers that keep shards elsewhere.
func EncodeShard(w io.Writer, rows []Row, opt ShardOptions) error {
	return encodeShard(w, rows, opt, false)
}

func encodeShard(w io.Writer, rows []Row, opt ShardOptions, release bool) error {
	enc, err := newShardEncoder(w, opt)
	if err != nil {
		return err
	}
	defer enc.release()
	groupBytes := opt.rowGroupBytes()
	var group int64
	start := 0
	for i := range rows {
		group += rows[i].payloadBytes()
		end := group >= groupBytes || i+1 == len(rows)
		if !end && i+1-start < writeBatch {
			continue
		}
		if err := enc.write(rows[start : i+1]); err != nil {
			return fmt.Errorf("rows %d-%d: %w", start, i, err)
		}
		if release {
			clear(rows[start : i+1])
		}
		if end {
			if err := enc.flush(); err != nil {
				return err
			}
			group = 0
		}
		start = i + 1
	}
	return enc.close()
}

// writeBatch is the most rows handed to the Parquet writer at once, counted from
// the start of their row group. The writer decides page boundaries after each
// Write (and after each run of 64 rows within one), so the same batches give the
// same pages, byte for byte, however the rows were collected. A page ends at the
// first batch that brings a column to the page buffer size (256 KiB): 32 windows
// of 2048 tokens for the token columns. Batches of 64 made pages of 64 such
// windows, twice the buffer size, and held about 5 MB more heap in an export with
// three splits open (see the contributor guide).
const writeBatch = 8

// writerFormat names the way this package encodes rows into shard bytes. Change
// it whenever the same rows and options would give other bytes (TestGoldenShard
// ties it to the golden shard), so that a rerun does not keep the shards of an
// interrupted run by another build for its own (see journalEntry.Writer).
const writerFormat = 2

// shardLibraries are the modules whose versions shard bytes depend on besides
// this package.
var shardLibraries = []string{"github.com/parquet-go/parquet-go", "github.com/klauspost/compress"}

// identity is a digest of everything the bytes of a shard depend on besides its
// rows: the options, writerFormat and the versions of shardLibraries in this build.
func (opt ShardOptions) identity() string {
	h := sha256.New()
	fmt.Fprintf(h, "relshard shard writer %d\ncompression %q\nrow group %d\ncreated by %q\n",
		writerFormat, opt.compression(), opt.rowGroupBytes(), opt.CreatedBy)
	for _, k := range slices.Sorted(maps.Keys(opt.Metadata)) {
		fmt.Fprintf(h, "metadata %q %q\n", k, opt.Metadata[k])
	}
	if bi, ok := debug.ReadBuildInfo(); ok {
		for _, d := range bi.Deps {
			if slices.Contains(shardLibraries, d.Path) {
				if d.Replace != nil {
					d = d.Replace
				}
				fmt.Fprintf(h, "module %s %s %s\n", d.Path, d.Version, d.Sum)
			}
		}
	}
	return hex.EncodeToString(h.Sum(nil)[:16])
}

// compression is the compression in effect.
func (opt ShardOptions) compression() string {
	if opt.Compression == "" {
		return CompressionZstd
	}
	return opt.Compression
}

// rowGroupBytes is the row-group target in effect.
func (opt ShardOptions) rowGroupBytes() int64 {
	if opt.RowGroupBytes <= 0 {
		return DefaultRowGroupBytes
	}
	return opt.RowGroupBytes
}

// shardEncoder writes one Parquet file a batch of rows at a time, so that a
// shard never needs more than a batch of rows in memory (the writer keeps the
// compressed pages of the open row group). Page boundaries follow the rows given
// to each Write (see writeBatch), so the same batches give the same bytes however
// the rows were collected.
type shardEncoder struct {
	pw    *parquet.GenericWriter[Row]
	spill *spillPool // nil when pages stay in memory
}

func newShardEncoder(w io.Writer, opt ShardOptions) (*shardEncoder, error) {
	name := opt.compression()
	codec, ok := codecs[name]
	if !ok {
		return nil, fmt.Errorf("unknown compression %q (want zstd, snappy or none)", name)
	}
	options := []parquet.WriterOption{
		parquet.Compression(codec),
		// No per-page statistics on the list columns: readers of training data
		// never filter by token id, and the statistics only add bytes.
		parquet.SkipPageStatistics("tokens", "list", "element"),
		parquet.SkipPageStatistics("time", "list", "element"),
		parquet.SkipPageStatistics("pitch", "list", "element"),
		parquet.SkipPageStatistics("inst", "list", "element"),
	}
	if opt.CreatedBy != "" {
		options = append(options, parquet.CreatedBy(opt.CreatedBy, "", ""))
	}
	for _, k := range slices.Sorted(maps.Keys(opt.Metadata)) {
		options = append(options, parquet.KeyValueMetadata(k, opt.Metadata[k]))
	}
	var spill *spillPool
	if opt.SpillDir != "" {
		spill = newSpillPool(opt.SpillDir)
		options = append(options, parquet.ColumnPageBuffers(spill))
	}
	return &shardEncoder{pw: parquet.NewGenericWriter[Row](w, options...), spill: spill}, nil
}

// write encodes rows into the open row group; the rows may be reused afterwards.
func (e *shardEncoder) write(rows []Row) error {
	if len(rows) == 0 {
		return nil
	}
	if _, err := e.pw.Write(rows); err != nil {
		return fmt.Errorf("encode rows: %w", err)
	}
	return nil
}

// flush ends the open row group.
func (e *shardEncoder) flush() error {
	if err := e.pw.Flush(); err != nil {
		return fmt.Errorf("flush row group: %w", err)
	}
	return nil
}

// close writes the footer and releases the spill files. It drops the Parquet
// writer too: its column buffers are garbage from here on, while the caller still
// hashes, syncs and renames the file (and the next shard of the split is already
// filling).
func (e *shardEncoder) close() error {
	err := e.pw.Close()
	e.pw = nil
	if err != nil {
		e.release()
		return fmt.Errorf("close parquet writer: %w", err)
	}
	return e.release()
}

// release closes the spill files, if any; an encoder given up half way must be
// released.
func (e *shardEncoder) release() error {
	if e.spill == nil {
		return nil
	}
	return e.spill.close()
}

type countWriter struct {
	w io.Writer
	n int64
}

func (c *countWriter) Write(p []byte) (int, error) {
	n, err := c.w.Write(p)
	c.n += int64(n)
	return n, err
}

// fileSHA256 returns the size and hex SHA-256 of a file.
func fileSHA256(path string) (int64, string, error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, "", err
	}
	defer f.Close()
	return hashReader(f, sha256.New())
}

func hashReader(r io.Reader, h hash.Hash) (int64, string, error) {
	n, err := io.Copy(h, r)
	if err != nil {
		return n, "", err
	}
	return n, hex.EncodeToString(h.Sum(nil)), nil
}

package export

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"maps"
	"os"
	"path"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"

	"github.com/parquet-go/parquet-go"
	"golang.org/x/sync/errgroup"
)

// Problem is one finding of Verify.
type Problem struct {
	Path string // shard path relative to the folder, or "manifest.json"
	Row  int64  // row index within the shard, or -1
	Msg  string
}

// String formats the problem as "path: row N: message" (without the row when -1).
func (p Problem) String() string {
	if p.Row >= 0 {
		return fmt.Sprintf("%s: row %d: %s", p.Path, p.Row, p.Msg)
	}
	return p.Path + ": " + p.Msg
}

// maxProblemsPerShard caps the row-level findings reported for one shard, so a
// broken shard does not bury the rest of the report.
const maxProblemsPerShard = 20

// Verify reads a dataset folder back and checks it against its manifest: every
// shard's size and SHA-256, Parquet schema and metadata, row count and token
// count; per row, equal list lengths, token ids below the vocabulary size, at most
// max_len tokens, pitches in −1..127, the split column and the split the ratio rule
// gives the content hash; across shards, that no content hash appears in two
// splits and no piece in two parts; and that the totals equal the manifest. It
// returns the problems found (none for a sound dataset), in manifest order; the
// error is for a folder that cannot be checked at all (no readable manifest) or a
// cancelled context. Shards are read on all cores.
func Verify(ctx context.Context, dir string) ([]Problem, error) {
	m, err := ReadManifest(dir)
	if err != nil {
		return nil, fmt.Errorf("verify %s: %w", dir, err)
	}
	v := &verifier{m: m, dir: dir, hashSplit: map[string]string{}, pieces: map[string]string{}, piecePart: map[string]string{},
		splitRows: map[string]int64{}}
	v.checkManifest()
	seen := map[string]bool{}
	var todo []int
	for i, sh := range m.Shards {
		if seen[sh.Path] {
			v.add(sh.Path, -1, "listed twice in the manifest")
			continue
		}
		seen[sh.Path] = true
		todo = append(todo, i)
	}
	// Shards are read on all cores; their findings are joined in manifest order,
	// so the report is the same whatever the timing.
	checks := make([]*shardCheck, len(m.Shards))
	next := make(chan int)
	g, gctx := errgroup.WithContext(ctx)
	for range min(runtime.NumCPU(), max(1, len(todo))) {
		g.Go(func() error {
			for i := range next {
				checks[i] = v.shard(m.Shards[i])
			}
			return nil
		})
	}
	g.Go(func() error {
		defer close(next)
		for _, i := range todo {
			select {
			case next <- i:
			case <-gctx.Done():
				return gctx.Err()
			}
		}
		return nil
	})
	if err := g.Wait(); err != nil {
		return v.problems, err
	}
	if err := ctx.Err(); err != nil {
		return v.problems, err
	}
	for _, i := range todo {
		v.join(checks[i])
	}
	v.checkTotals()
	v.checkStrays(seen)
	return v.problems, nil
}

type verifier struct {
	m         *Manifest
	dir       string
	problems  []Problem
	hashSplit map[string]string // content hash → split
	pieces    map[string]string // piece → split
	piecePart map[string]string // piece → part tag of the shard name ("" for a single run)
	rows      int64
	tokens    int64
	splitRows map[string]int64
}

// shardCheck holds what reading one shard found.
type shardCheck struct {
	sh       Shard
	problems []Problem
	rows     int64
	tokens   int64
	part     string               // part tag of the shard name, "" for a single run
	hashes   map[string]firstSeen // content hash → where it first appears in the shard
	pieces   map[string]firstSeen // piece → where it first appears in the shard
	reported int
}

type firstSeen struct {
	split string
	row   int64
}

func (c *shardCheck) add(row int64, format string, a ...any) {
	c.problems = append(c.problems, Problem{Path: c.sh.Path, Row: row, Msg: fmt.Sprintf(format, a...)})
}

// bad adds a row problem, up to maxProblemsPerShard of them.
func (c *shardCheck) bad(row int64, format string, a ...any) {
	if c.reported < maxProblemsPerShard {
		c.add(row, format, a...)
	}
	c.reported++
}

// join adds one shard's findings, checking its content hashes and pieces against
// those of the shards before it.
func (v *verifier) join(c *shardCheck) {
	v.problems = append(v.problems, c.problems...)
	v.rows += c.rows
	v.tokens += c.tokens
	v.splitRows[c.sh.Split] += c.rows
	for _, h := range slices.Sorted(maps.Keys(c.hashes)) {
		f := c.hashes[h]
		if s, ok := v.hashSplit[h]; !ok {
			v.hashSplit[h] = f.split
		} else if s != f.split {
			v.add(c.sh.Path, f.row, "content hash %s is in both %s and %s: splits not disjoint", h, s, f.split)
		}
	}
	for _, p := range slices.Sorted(maps.Keys(c.pieces)) {
		f := c.pieces[p]
		if s, ok := v.pieces[p]; !ok {
			v.pieces[p] = f.split
			v.piecePart[p] = c.part
		} else if v.piecePart[p] != c.part {
			v.add(c.sh.Path, f.row, "piece %s appears in parts %q and %q", p, v.piecePart[p], c.part)
		} else if s != f.split {
			v.add(c.sh.Path, f.row, "piece %s is in both %s and %s", p, s, f.split)
		}
	}
}

func (v *verifier) add(p string, row int64, format string, a ...any) {
	v.problems = append(v.problems, Problem{Path: p, Row: row, Msg: fmt.Sprintf(format, a...)})
}

func (v *verifier) checkManifest() {
	m := v.m
	if m.SchemaVersion != SchemaVersion {
		v.add(ManifestName, -1, "schema_version %d, this tool reads %d", m.SchemaVersion, SchemaVersion)
	}
	if h := m.Config.Hash(); h != m.ConfigHash {
		v.add(ManifestName, -1, "config_hash %s does not match the config it lists (%s)", m.ConfigHash, h)
	}
	if m.VocabSize <= 0 {
		v.add(ManifestName, -1, "vocab_size %d", m.VocabSize)
	}
	if m.MaxLen <= 0 {
		v.add(ManifestName, -1, "max_len %d", m.MaxLen)
	}
	files := map[string]bool{}
	for i, f := range m.Files {
		k := f.Dataset + "\x00" + f.Source
		if files[k] {
			v.add(ManifestName, -1, "files[%d] (%s %s) listed twice", i, f.Dataset, f.Source)
		}
		files[k] = true
		switch f.Status {
		case "ok", "skipped", "duplicate":
		default:
			v.add(ManifestName, -1, "files[%d] (%s %s): unknown status %q", i, f.Dataset, f.Source, f.Status)
		}
	}
}

var expectedSchema = parquet.SchemaOf(Row{})

// shard checks one shard; a panic of the Parquet reader on a damaged file becomes
// a problem.
func (v *verifier) shard(sh Shard) (c *shardCheck) {
	c = &shardCheck{sh: sh, hashes: map[string]firstSeen{}, pieces: map[string]firstSeen{}}
	defer func() {
		if r := recover(); r != nil {
			c.add(-1, "Parquet reader failed: %v", r)
		}
	}()
	p, err := localPath(v.dir, sh.Path)
	if err != nil {
		c.add(-1, "%v", err)
		return c
	}
	if !slices.Contains(Splits[:], sh.Split) {
		c.add(-1, "unknown split %q", sh.Split)
	}
	if dir := path.Dir(sh.Path); dir != sh.Split {
		c.add(-1, "in folder %q, want the split's folder %q", dir, sh.Split)
	}
	size, sum, err := fileSHA256(p)
	if err != nil {
		c.add(-1, "%v", err)
		return c
	}
	if size != sh.Bytes || sum != sh.SHA256 {
		if size != sh.Bytes {
			c.add(-1, "size %d bytes, manifest says %d", size, sh.Bytes)
		}
		if sum != sh.SHA256 {
			c.add(-1, "sha256 %s, manifest says %s", sum, sh.SHA256)
		}
		// Not the file that was written: its bytes are not handed to the Parquet
		// reader, which is not hardened against arbitrary damage.
		c.add(-1, "contents not checked: the file differs from the one written")
		return c
	}
	f, err := os.Open(p)
	if err != nil {
		c.add(-1, "%v", err)
		return c
	}
	defer f.Close()
	pf, err := parquet.OpenFile(f, size)
	if err != nil {
		c.add(-1, "not a readable Parquet file: %v", err)
		return c
	}
	if !parquet.EqualNodes(pf.Schema(), expectedSchema) {
		c.add(-1, "schema differs from schema version %d:\n%s", SchemaVersion, pf.Schema())
		return c
	}
	v.checkMeta(c, pf)
	if pf.NumRows() != sh.Rows {
		c.add(-1, "%d rows, manifest says %d", pf.NumRows(), sh.Rows)
	}
	if base := path.Base(sh.Path); shardPattern.MatchString(base) {
		if rest := strings.TrimPrefix(base, sh.Split+"-"); strings.HasPrefix(rest, "p") {
			c.part, _, _ = strings.Cut(rest, "-")
		}
	}
	r := parquet.NewGenericReader[Row](pf)
	defer r.Close()
	batch := make([]Row, 128)
	var row, tokens int64
	for {
		n, err := r.Read(batch)
		for i := range batch[:n] {
			rw := &batch[i]
			tokens += int64(len(rw.Tokens))
			v.checkRow(c, rw, row)
			row++
		}
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			c.add(row, "read: %v", err)
			return
		}
	}
	if c.reported > maxProblemsPerShard {
		c.add(-1, "%d more row problems not shown", c.reported-maxProblemsPerShard)
	}
	if tokens != sh.Tokens {
		c.add(-1, "%d tokens, manifest says %d", tokens, sh.Tokens)
	}
	c.rows, c.tokens = row, tokens
	return c
}

func (v *verifier) checkMeta(c *shardCheck, pf *parquet.File) {
	sh := c.sh
	want := map[string]string{
		MetaSchemaVersion: strconv.Itoa(SchemaVersion),
		MetaConfigHash:    v.m.ConfigHash,
		MetaSplit:         sh.Split,
		MetaEncoding:      v.m.Encoding,
		MetaTimeUnit:      v.m.TimeUnit,
	}
	for _, k := range []string{MetaSchemaVersion, MetaConfigHash, MetaSplit, MetaEncoding, MetaTimeUnit} {
		got, ok := pf.Lookup(k)
		if !ok {
			c.add(-1, "metadata key %s missing", k)
		} else if got != want[k] {
			c.add(-1, "metadata %s = %q, want %q", k, got, want[k])
		}
	}
	for _, k := range []struct {
		key  string
		want json.RawMessage
	}{{MetaVocabulary, v.m.Vocabulary}, {MetaBuckets, v.m.Buckets}} {
		got, ok := pf.Lookup(k.key)
		if !ok {
			c.add(-1, "metadata key %s missing", k.key)
			continue
		}
		if !jsonEqual([]byte(got), k.want) {
			c.add(-1, "metadata %s differs from the manifest", k.key)
		}
	}
}

func (v *verifier) checkRow(c *shardCheck, rw *Row, row int64) {
	sh, bad := c.sh, c.bad
	n := len(rw.Tokens)
	if len(rw.Time) != n || len(rw.Pitch) != n || len(rw.Inst) != n {
		bad(row, "list lengths differ: tokens %d, time %d, pitch %d, inst %d", n, len(rw.Time), len(rw.Pitch), len(rw.Inst))
	}
	if n == 0 {
		bad(row, "empty window")
	}
	if n > v.m.MaxLen {
		bad(row, "%d tokens, over max_len %d", n, v.m.MaxLen)
	}
	for i, id := range rw.Tokens {
		if id < 0 || int(id) >= v.m.VocabSize {
			bad(row, "token %d: id %d outside the vocabulary (size %d)", i, id, v.m.VocabSize)
			break
		}
	}
	for i := 1; i < len(rw.Time); i++ {
		if rw.Time[i] < rw.Time[i-1] {
			bad(row, "token %d: time %d before the previous token's %d", i, rw.Time[i], rw.Time[i-1])
			break
		}
	}
	for i, p := range rw.Pitch {
		if p < -1 || p > 127 {
			bad(row, "token %d: pitch %d outside -1..127", i, p)
			break
		}
	}
	if rw.Split != sh.Split {
		bad(row, "split %q in a %s shard", rw.Split, sh.Split)
	}
	if want := SplitOf(rw.ContentHash, v.m.Config.Shards.Splits); rw.Split != want {
		bad(row, "content hash %s belongs to %s by the split rule, row says %s", rw.ContentHash, want, rw.Split)
	}
	if f, ok := c.hashes[rw.ContentHash]; !ok {
		c.hashes[rw.ContentHash] = firstSeen{rw.Split, row}
	} else if f.split != rw.Split {
		bad(row, "content hash %s is in both %s and %s: splits not disjoint", rw.ContentHash, f.split, rw.Split)
	}
	if f, ok := c.pieces[rw.Piece]; !ok {
		c.pieces[rw.Piece] = firstSeen{rw.Split, row}
	} else if f.split != rw.Split {
		bad(row, "piece %s is in both %s and %s", rw.Piece, f.split, rw.Split)
	}
}

func (v *verifier) checkTotals() {
	m := v.m
	t := m.Totals
	check := func(what string, got, want int64) {
		if got != want {
			v.add(ManifestName, -1, "totals: %s is %d, the shards hold %d", what, want, got)
		}
	}
	var bytes int64
	splitPieces := map[string]int64{}
	for _, s := range v.pieces {
		splitPieces[s]++
	}
	for _, sh := range m.Shards {
		bytes += sh.Bytes
	}
	check("windows", v.rows, t.Windows)
	check("tokens", v.tokens, t.Tokens)
	check("bytes", bytes, t.Bytes)
	check("shards", int64(len(m.Shards)), t.Shards)
	check("pieces", int64(len(v.pieces)), t.Pieces)
	for _, s := range Splits {
		check(s+" windows", v.splitRows[s], t.Splits[s].Windows)
		check(s+" pieces", splitPieces[s], t.Splits[s].Pieces)
	}
	var fileWindows, filePieces int64
	for _, f := range m.Files {
		fileWindows += f.Windows
		filePieces += f.Pieces
	}
	if fileWindows != t.Windows {
		v.add(ManifestName, -1, "files list %d windows in all, totals say %d", fileWindows, t.Windows)
	}
	if filePieces != t.Pieces {
		v.add(ManifestName, -1, "files list %d pieces in all, totals say %d", filePieces, t.Pieces)
	}
	if int64(len(m.Files)) != t.Files {
		v.add(ManifestName, -1, "%d files listed, totals say %d", len(m.Files), t.Files)
	}
}

// checkStrays reports shard-named files and temporaries the manifest does not list.
func (v *verifier) checkStrays(listed map[string]bool) {
	for _, s := range Splits {
		entries, err := os.ReadDir(filepath.Join(v.dir, s))
		if errors.Is(err, fs.ErrNotExist) {
			continue
		}
		if err != nil {
			v.add(s, -1, "%v", err)
			continue
		}
		for _, e := range entries {
			rel := path.Join(s, e.Name())
			switch {
			case strings.HasSuffix(e.Name(), TempSuffix):
				v.add(rel, -1, "leftover temporary file of an interrupted run")
			case strings.HasSuffix(e.Name(), ".parquet") && !listed[rel]:
				v.add(rel, -1, "Parquet file not listed in the manifest")
			}
		}
	}
}

// jsonEqual compares two JSON texts ignoring insignificant white space.
func jsonEqual(a, b []byte) bool {
	var ca, cb bytes.Buffer
	if json.Compact(&ca, a) != nil || json.Compact(&cb, b) != nil {
		return bytes.Equal(a, b)
	}
	return bytes.Equal(ca.Bytes(), cb.Bytes())
}

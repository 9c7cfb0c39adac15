package export

import (
	"context"
	"crypto/sha256"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"

	"github.com/parquet-go/parquet-go"
)

// MergeOptions control Merge.
type MergeOptions struct {
	// Out is the folder of the merged dataset.
	Out string
	// Overwrite allows replacing a dataset of another config in Out (see
	// Options.Overwrite).
	Overwrite bool
	// Progress, when set, is called after each shard copied.
	Progress func(Progress)
}

// Merge combines the folders written by the N part runs of one export (Options.Part
// 1/N … N/N) into one dataset in opt.Out with one manifest. It checks that the parts
// come from the same config and tool version, that every part is present once, that
// they listed the same input files, and that no piece and no content hash is in two
// parts; it copies every shard (checking its SHA-256 against the part's manifest),
// recounts the coverage from the rows, and writes the manifest last. The merged rows
// are those of a single run with the same config.
func Merge(ctx context.Context, partDirs []string, opt MergeOptions) (*Manifest, error) {
	if len(partDirs) == 0 {
		return nil, errors.New("merge: no part folders")
	}
	if opt.Out == "" {
		return nil, errors.New("merge: no output folder")
	}
	parts := make([]*Manifest, len(partDirs))
	for i, d := range partDirs {
		if same, err := sameDir(d, opt.Out); err != nil || same {
			if err == nil {
				err = fmt.Errorf("merge: output folder %s is part folder %s", opt.Out, d)
			}
			return nil, err
		}
		m, err := ReadManifest(d)
		if err != nil {
			return nil, fmt.Errorf("merge: part %s: %w", d, err)
		}
		parts[i] = m
	}
	if err := checkParts(partDirs, parts); err != nil {
		return nil, err
	}
	// Parts in index order, whatever the order of the arguments.
	order := make([]int, len(parts))
	for i := range order {
		order[i] = i
	}
	slices.SortFunc(order, func(a, b int) int { return parts[a].Part.Index - parts[b].Part.Index })

	first := parts[order[0]]
	cfg := first.Config
	mk := marker{Format: ManifestKind, ConfigHash: first.ConfigHash}
	if _, err := prepareOut(opt.Out, mk, opt.Overwrite); err != nil {
		return nil, err
	}
	cov, err := newCoverage(cfg)
	if err != nil {
		return nil, err
	}
	cw, err := cov.worker()
	if err != nil {
		return nil, err
	}
	owner := map[string]int{} // piece and content hash → part index
	splitPieces := map[string]int64{}
	pieceSeen := map[string]bool{}
	var shards []Shard
	var prog Progress
	paths := map[string]bool{}
	for _, pi := range order {
		pm := parts[pi]
		for _, sh := range pm.Shards {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			if paths[sh.Path] {
				return nil, fmt.Errorf("merge: shard %s is listed by two parts", sh.Path)
			}
			paths[sh.Path] = true
			src, err := localPath(partDirs[pi], sh.Path)
			if err != nil {
				return nil, fmt.Errorf("merge: part %s: %w", partDirs[pi], err)
			}
			dst, err := localPath(opt.Out, sh.Path)
			if err != nil {
				return nil, err
			}
			if err := copyShard(src, dst, sh); err != nil {
				return nil, fmt.Errorf("merge: part %s: %w", partDirs[pi], err)
			}
			err = readRows(dst, func(rows []Row) error {
				for i := range rows {
					r := &rows[i]
					for _, key := range []string{"piece " + r.Piece, "content hash " + r.ContentHash} {
						if o, ok := owner[key]; !ok {
							owner[key] = pm.Part.Index
						} else if o != pm.Part.Index {
							return fmt.Errorf("%s is in part %d and part %d", key, o, pm.Part.Index)
						}
					}
					if !pieceSeen[r.Piece] {
						pieceSeen[r.Piece] = true
						splitPieces[r.Split]++
					}
				}
				return cw.addRows(rows)
			})
			if err != nil {
				return nil, fmt.Errorf("merge: %s of part %s: %w", sh.Path, partDirs[pi], err)
			}
			shards = append(shards, sh)
			prog.Shards++
			prog.Windows += sh.Rows
			if opt.Progress != nil {
				opt.Progress(prog)
			}
		}
	}
	cov.done(cw)
	covJSON, err := cov.summary()
	if err != nil {
		return nil, err
	}
	splitRank := map[string]int{}
	for i, s := range Splits {
		splitRank[s] = i
	}
	// Stable: within a split, parts in index order, each part's shards in its order.
	slices.SortStableFunc(shards, func(a, b Shard) int { return splitRank[a.Split] - splitRank[b.Split] })

	files := slices.Clone(first.Files)
	for i := range files {
		files[i].Pieces, files[i].Windows = 0, 0
		for _, pm := range parts {
			files[i].Pieces += pm.Files[i].Pieces
			files[i].Windows += pm.Files[i].Windows
		}
	}
	licenses := map[string]string{}
	for _, pi := range order {
		for k, v := range parts[pi].Licenses {
			if old, ok := licenses[k]; ok && old != v {
				return nil, fmt.Errorf("merge: dataset %s has licence %q in one part and %q in another", k, old, v)
			}
			licenses[k] = v
		}
	}
	if len(licenses) == 0 {
		licenses = nil
	}
	keep := map[string]bool{}
	for _, sh := range shards {
		keep[sh.Path] = true
	}
	if err := removeShardFiles(opt.Out, keep); err != nil {
		return nil, err
	}
	m := &Manifest{
		Format: ManifestKind, SchemaVersion: SchemaVersion, ToolVersion: first.ToolVersion,
		ConfigHash: first.ConfigHash, Config: cfg,
		Encoding: first.Encoding, TimeUnit: first.TimeUnit, VocabSize: first.VocabSize, MaxLen: first.MaxLen,
		Vocabulary: first.Vocabulary, Buckets: first.Buckets, Coverage: covJSON, Licenses: licenses,
		Shards: shards, Files: files,
	}
	if m.Shards == nil {
		m.Shards = []Shard{}
	}
	m.recount(splitPieces)
	if err := commitManifest(opt.Out, m, nil); err != nil {
		return nil, err
	}
	return m, nil
}

// checkParts checks that the manifests are the N distinct parts of one export.
func checkParts(dirs []string, parts []*Manifest) error {
	first := parts[0]
	if first.Part == nil {
		return fmt.Errorf("merge: %s is a whole dataset, not a part (export with --part I/N)", dirs[0])
	}
	n := first.Part.Count
	if len(parts) != n {
		return fmt.Errorf("merge: %d part folders given, the parts are of %d", len(parts), n)
	}
	seen := map[int]string{}
	for i, m := range parts {
		switch {
		case m.Part == nil:
			return fmt.Errorf("merge: %s is a whole dataset, not a part", dirs[i])
		case m.Part.Count != n:
			return fmt.Errorf("merge: %s is part %s, %s is part %s", dirs[0], first.Part, dirs[i], m.Part)
		case m.ConfigHash != first.ConfigHash:
			return fmt.Errorf("merge: %s has config %s, %s has %s", dirs[0], short(first.ConfigHash), dirs[i], short(m.ConfigHash))
		case m.ToolVersion != first.ToolVersion:
			return fmt.Errorf("merge: %s was written by relshard %s, %s by %s", dirs[0], first.ToolVersion, dirs[i], m.ToolVersion)
		case len(m.Files) != len(first.Files):
			return fmt.Errorf("merge: %s lists %d input files, %s lists %d: the parts read different inputs", dirs[0], len(first.Files), dirs[i], len(m.Files))
		}
		if d, dup := seen[m.Part.Index]; dup {
			return fmt.Errorf("merge: %s and %s are both part %s", d, dirs[i], m.Part)
		}
		seen[m.Part.Index] = dirs[i]
		for j, f := range m.Files {
			g := first.Files[j]
			if f.Dataset != g.Dataset || f.Source != g.Source || f.Status != g.Status || f.Reason != g.Reason {
				return fmt.Errorf("merge: input %d is %s %s (%s) in %s but %s %s (%s) in %s: the parts read different inputs",
					j, g.Dataset, g.Source, g.Status, dirs[0], f.Dataset, f.Source, f.Status, dirs[i])
			}
		}
	}
	return nil
}

// copyShard copies a shard crash-safely, checking its size and SHA-256 against
// the part's manifest.
func copyShard(src, dst string, sh Shard) error {
	in, err := os.Open(src)
	if err != nil {
		return err
	}
	defer in.Close()
	if err := os.MkdirAll(filepath.Dir(dst), 0o755); err != nil {
		return err
	}
	tmp := dst + TempSuffix
	out, err := os.OpenFile(tmp, os.O_CREATE|os.O_TRUNC|os.O_WRONLY, 0o644)
	if err != nil {
		return err
	}
	h := sha256.New()
	n, err := io.Copy(io.MultiWriter(out, h), in)
	if err == nil {
		err = out.Sync()
	}
	if cerr := out.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		if sum := fmt.Sprintf("%x", h.Sum(nil)); n != sh.Bytes || sum != sh.SHA256 {
			err = fmt.Errorf("%s: %d bytes with sha256 %s, its manifest says %d bytes with %s", sh.Path, n, sum, sh.Bytes, sh.SHA256)
		}
	}
	if err == nil {
		err = os.Rename(tmp, dst)
	}
	if err != nil {
		os.Remove(tmp)
	}
	return err
}

// readRows reads a shard in batches; the batch is reused between calls.
func readRows(path string, f func([]Row) error) (err error) {
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("Parquet reader failed: %v", r)
		}
	}()
	file, err := os.Open(path)
	if err != nil {
		return err
	}
	defer file.Close()
	st, err := file.Stat()
	if err != nil {
		return err
	}
	pf, err := parquet.OpenFile(file, st.Size())
	if err != nil {
		return err
	}
	if !parquet.EqualNodes(pf.Schema(), expectedSchema) {
		return fmt.Errorf("schema differs from schema version %d", SchemaVersion)
	}
	r := parquet.NewGenericReader[Row](pf)
	defer r.Close()
	batch := make([]Row, 128)
	for {
		n, err := r.Read(batch)
		if n > 0 {
			if ferr := f(batch[:n]); ferr != nil {
				return ferr
			}
		}
		if errors.Is(err, io.EOF) {
			return nil
		}
		if err != nil {
			return err
		}
	}
}

// sameDir reports whether two paths name the same existing folder.
func sameDir(a, b string) (bool, error) {
	sa, err := os.Stat(a)
	if err != nil {
		return false, fmt.Errorf("merge: part folder: %w", err)
	}
	sb, err := os.Stat(b)
	if err != nil {
		return false, nil // the output does not exist yet
	}
	return os.SameFile(sa, sb), nil
}

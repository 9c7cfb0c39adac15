package export

import (
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"regexp"
	"strings"
)

// Folder layout of a dataset:
//
//	manifest.json                       written last
//	train/train-000000.parquet          shards of a single run, numbered from 0 per split
//	validation/validation-000000.parquet
//	test/test-000000.parquet
//	train/train-p2-000000.parquet       shards written by part 2 of a split run (kept by merge)
//
// Files being written end in TempSuffix; the run marker (MarkerName) and the
// journal of completed shards (JournalName) exist while a run is in progress.

// shardName returns the slash-separated relative path of shard seq of a split.
func shardName(split string, part Part, seq int) string {
	if part.Whole() {
		return path.Join(split, fmt.Sprintf("%s-%06d.parquet", split, seq))
	}
	return path.Join(split, fmt.Sprintf("%s-p%d-%06d.parquet", split, part.Index, seq))
}

// shardPattern matches every name shardName can return (the file name only).
var shardPattern = regexp.MustCompile(`^(train|validation|test)-(p[0-9]+-)?[0-9]{6,}\.parquet$`)

// marker is the content of MarkerName: which run owns the folder.
type marker struct {
	Format     string `json:"format"`
	ConfigHash string `json:"config_hash"`
	Part       *Part  `json:"part,omitempty"`
}

// ErrFolderInUse is wrapped by the error for an output folder that holds other
// data, or a dataset made with a different config (without overwrite).
var ErrFolderInUse = errors.New("output folder in use")

// prepareOut makes dir ready for a run that owns it under the given marker: it
// creates dir, refuses a non-empty folder that is not relshard output, refuses a
// dataset or unfinished run with another config unless overwrite (which removes
// only the files that dataset or run made), removes leftovers of an interrupted run
// of the same config, and writes the marker. The previous manifest of the same
// config, if any, is removed first so that the folder never looks complete while
// the rerun rewrites it.
//
// resume reports that the folder held an earlier run of the same config, whose
// completed shards (see JournalName) may be kept.
func prepareOut(dir string, mk marker, overwrite bool) (resume bool, err error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return false, fmt.Errorf("create output folder: %w", err)
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return false, fmt.Errorf("read output folder: %w", err)
	}
	if len(entries) > 0 {
		if resume, err = claimFolder(dir, mk, overwrite); err != nil {
			return false, err
		}
	}
	if err := writeMarker(dir, mk); err != nil {
		return false, err
	}
	return resume, removeTemps(dir)
}

// writeMarker marks dir as owned by the run of mk. It comes before anything of a
// previous run is removed, so that a kill at any moment leaves either a complete
// dataset or a marked folder that a rerun takes as its own.
func writeMarker(dir string, mk marker) error {
	data, err := json.MarshalIndent(mk, "", "  ")
	if err != nil {
		return err
	}
	if err := writeFileAtomic(filepath.Join(dir, MarkerName), append(data, '\n')); err != nil {
		return fmt.Errorf("write run marker: %w", err)
	}
	return nil
}

func claimFolder(dir string, mk marker, overwrite bool) (resume bool, err error) {
	manifestPath := filepath.Join(dir, ManifestName)
	if _, err := os.Stat(manifestPath); err == nil {
		m, err := ReadManifest(dir)
		if err != nil {
			return false, fmt.Errorf("%w: %s holds a %s that cannot be read (%v); not touching it", ErrFolderInUse, dir, ManifestName, err)
		}
		same := m.ConfigHash == mk.ConfigHash && samePart(m.Part, mk.Part)
		if !same && !overwrite {
			return false, fmt.Errorf("%w: %s holds a dataset made with another config (hash %s, part %s; this run: %s, part %s); use --overwrite to replace it",
				ErrFolderInUse, dir, short(m.ConfigHash), partText(m.Part), short(mk.ConfigHash), partText(mk.Part))
		}
		if err := writeMarker(dir, mk); err != nil {
			return false, err
		}
		if same {
			return true, os.Remove(manifestPath)
		}
		return false, removeDataset(dir, m)
	}
	data, err := os.ReadFile(filepath.Join(dir, MarkerName))
	if err != nil {
		if onlyMarkerTemp(dir) {
			// A run killed while writing its marker, the first file it writes into
			// an empty folder: the folder is ours and nothing else is in it.
			return false, nil
		}
		return false, fmt.Errorf("%w: %s is not empty and holds no relshard dataset; choose an empty or new folder", ErrFolderInUse, dir)
	}
	var old marker
	if err := json.Unmarshal(data, &old); err != nil || old.Format != ManifestKind {
		return false, fmt.Errorf("%w: %s holds an unreadable %s; not touching it", ErrFolderInUse, dir, MarkerName)
	}
	if old.ConfigHash == mk.ConfigHash && samePart(old.Part, mk.Part) {
		return true, nil
	}
	if !overwrite {
		return false, fmt.Errorf("%w: %s holds an unfinished run with another config (hash %s, part %s; this run: %s, part %s); use --overwrite to replace it",
			ErrFolderInUse, dir, short(old.ConfigHash), partText(old.Part), short(mk.ConfigHash), partText(mk.Part))
	}
	// An unfinished run has no manifest listing its files: remove exactly the
	// files that its naming scheme could have made.
	if err := writeMarker(dir, mk); err != nil {
		return false, err
	}
	return false, removeShardFiles(dir, nil)
}

// onlyMarkerTemp reports whether dir holds nothing but the temporary file of the run
// marker.
func onlyMarkerTemp(dir string) bool {
	entries, err := os.ReadDir(dir)
	return err == nil && len(entries) == 1 && entries[0].Name() == MarkerName+TempSuffix && entries[0].Type().IsRegular()
}

// removeDataset removes the files a manifest lists, its temporaries and the manifest.
func removeDataset(dir string, m *Manifest) error {
	for _, sh := range m.Shards {
		p, err := localPath(dir, sh.Path)
		if err != nil {
			return err
		}
		if err := os.Remove(p); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return fmt.Errorf("remove old shard: %w", err)
		}
		os.Remove(p + TempSuffix)
	}
	for _, s := range Splits {
		os.Remove(filepath.Join(dir, s)) // only if empty
	}
	if err := os.Remove(filepath.Join(dir, ManifestName)); err != nil {
		return fmt.Errorf("remove old manifest: %w", err)
	}
	return nil
}

// removeShardFiles removes files in the split folders named like shards (and
// their temporaries), except those in keep (relative slash paths).
func removeShardFiles(dir string, keep map[string]bool) error {
	for _, s := range Splits {
		entries, err := os.ReadDir(filepath.Join(dir, s))
		if errors.Is(err, fs.ErrNotExist) {
			continue
		}
		if err != nil {
			return fmt.Errorf("read %s: %w", s, err)
		}
		for _, e := range entries {
			name := strings.TrimSuffix(e.Name(), TempSuffix)
			if !e.Type().IsRegular() || !shardPattern.MatchString(name) || keep[path.Join(s, e.Name())] {
				continue
			}
			if err := os.Remove(filepath.Join(dir, s, e.Name())); err != nil {
				return fmt.Errorf("remove stale shard: %w", err)
			}
		}
		if keep == nil {
			os.Remove(filepath.Join(dir, s)) // only if empty
		}
	}
	return nil
}

// removeTemps removes the temporary files an interrupted run left.
func removeTemps(dir string) error {
	for _, d := range []string{"", Splits[0], Splits[1], Splits[2]} {
		entries, err := os.ReadDir(filepath.Join(dir, d))
		if errors.Is(err, fs.ErrNotExist) {
			continue
		}
		if err != nil {
			return err
		}
		for _, e := range entries {
			n := e.Name()
			if !e.Type().IsRegular() || !strings.HasSuffix(n, TempSuffix) {
				continue
			}
			base := strings.TrimSuffix(n, TempSuffix)
			if shardPattern.MatchString(base) || isSpillName(base) || (d == "" && (base == ManifestName || base == MarkerName || base == JournalName)) {
				if err := os.Remove(filepath.Join(dir, d, n)); err != nil {
					return fmt.Errorf("remove leftover temporary file: %w", err)
				}
			}
		}
	}
	return nil
}

// localPath turns a manifest's relative slash path into a path under dir,
// refusing anything that would leave dir.
func localPath(dir, rel string) (string, error) {
	if rel == "" || !filepath.IsLocal(filepath.FromSlash(rel)) {
		return "", fmt.Errorf("manifest path %q leaves the dataset folder", rel)
	}
	return filepath.Join(dir, filepath.FromSlash(rel)), nil
}

func samePart(a, b *Part) bool {
	if a == nil || b == nil {
		return a == nil && b == nil
	}
	return *a == *b
}

func partText(p *Part) string {
	if p == nil {
		return "whole"
	}
	return p.String()
}

func short(h string) string {
	if len(h) > 12 {
		return h[:12]
	}
	return h
}

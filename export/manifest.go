package export

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// File names inside a dataset folder.
const (
	ManifestName = "manifest.json"      // written last; its presence means the dataset is complete
	MarkerName   = ".relshard-run.json" // written first; marks a run in progress, removed after the manifest
	ManifestKind = "relshard-dataset"   // Manifest.Format
)

// Manifest describes a complete dataset folder: how it was made, what it holds and
// what happened to every input. It is written last, so a folder with a manifest is
// complete. It holds no timestamps: equal inputs and config give an equal manifest.
type Manifest struct {
	Format        string `json:"format"`         // ManifestKind
	SchemaVersion int    `json:"schema_version"` // SchemaVersion of the shards
	ToolVersion   string `json:"tool_version"`
	ConfigHash    string `json:"config_hash"` // Config.Hash of Config
	Config        Config `json:"config"`      // the full resolved config
	Part          *Part  `json:"part,omitempty"`

	Encoding   string          `json:"encoding"`
	TimeUnit   string          `json:"time_unit"`
	VocabSize  int             `json:"vocab_size"`
	MaxLen     int             `json:"max_len"`    // tokens per window at most
	Vocabulary json.RawMessage `json:"vocabulary"` // the encoding's vocabulary
	Buckets    json.RawMessage `json:"buckets"`    // relative-position bucket tables
	Coverage   json.RawMessage `json:"coverage"`   // bucket coverage summary of the exported windows

	Licenses map[string]string `json:"licenses,omitempty"` // dataset → licence/provenance text given by the user

	Totals Totals      `json:"totals"`
	Shards []Shard     `json:"shards"`
	Files  []FileEntry `json:"files"` // every input file exactly once, in scan order (not filled by Run)

	counts *FileCounts // kept by Run in place of Files
}

// Totals sums a dataset.
type Totals struct {
	Files          int64                  `json:"files"`
	FilesOK        int64                  `json:"files_ok"`
	FilesSkipped   int64                  `json:"files_skipped"`
	FilesDuplicate int64                  `json:"files_duplicate"`
	Pieces         int64                  `json:"pieces"` // pieces exported
	Windows        int64                  `json:"windows"`
	Tokens         int64                  `json:"tokens"`
	Bytes          int64                  `json:"bytes"` // shard bytes
	Shards         int64                  `json:"shards"`
	Splits         map[string]SplitTotals `json:"splits"`
}

// SplitTotals sums one split.
type SplitTotals struct {
	Pieces  int64 `json:"pieces"`
	Windows int64 `json:"windows"`
	Tokens  int64 `json:"tokens"`
	Shards  int64 `json:"shards"`
	Bytes   int64 `json:"bytes"`
}

// FileEntry is the outcome for one input file.
type FileEntry struct {
	Dataset string `json:"dataset"`
	Source  string `json:"source"`
	Status  string `json:"status"`           // ok, skipped or duplicate (ingest's statuses)
	Reason  string `json:"reason,omitempty"` // why skipped, or which file it duplicates
	Class   string `json:"class,omitempty"`  // kind of skip reason, for counting: "truncated", "not MIDI", "encode"...
	Pieces  int64  `json:"pieces"`           // pieces exported from the file (in this part)
	Windows int64  `json:"windows"`          // rows written from the file (in this part)
}

// ReadManifest reads and checks the manifest of a dataset folder.
func ReadManifest(dir string) (*Manifest, error) {
	data, err := os.ReadFile(filepath.Join(dir, ManifestName))
	if err != nil {
		return nil, err
	}
	m, err := DecodeManifest(data)
	if err != nil {
		return nil, fmt.Errorf("read %s: %w", filepath.Join(dir, ManifestName), err)
	}
	return m, nil
}

// DecodeManifest parses a manifest. Unknown keys are errors (a manifest from a
// newer schema is not silently half-read).
func DecodeManifest(data []byte) (*Manifest, error) {
	var m Manifest
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&m); err != nil {
		return nil, fmt.Errorf("decode manifest: %w", err)
	}
	if m.Format != ManifestKind {
		return nil, fmt.Errorf("decode manifest: format %q, want %q", m.Format, ManifestKind)
	}
	if dec.More() {
		return nil, fmt.Errorf("decode manifest: data after the JSON object")
	}
	return &m, nil
}

// Encode returns the manifest as indented JSON ending in a newline. A manifest
// returned by Run has no file entries to encode (see Run) and is refused.
func (m *Manifest) Encode() ([]byte, error) {
	if m.counts != nil && len(m.Files) == 0 && m.Totals.Files > 0 {
		return nil, errors.New("encode manifest: a manifest returned by Run holds no file entries; read the written one with ReadManifest")
	}
	data, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return nil, fmt.Errorf("encode manifest: %w", err)
	}
	return append(data, '\n'), nil
}

// writeFileAtomic writes data to a temporary name beside path, syncs it and
// renames it into place.
func writeFileAtomic(path string, data []byte) error {
	return writeFileAtomicFunc(path, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

// writeFileAtomicFunc is writeFileAtomic for contents that write streams, through
// a buffer.
func writeFileAtomicFunc(path string, write func(io.Writer) error) error {
	tmp := path + TempSuffix
	f, err := os.OpenFile(tmp, os.O_CREATE|os.O_TRUNC|os.O_WRONLY, 0o644)
	if err != nil {
		return err
	}
	bw := bufio.NewWriterSize(f, 64<<10)
	err = write(bw)
	if err == nil {
		err = bw.Flush()
	}
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Rename(tmp, path)
	}
	if err != nil {
		os.Remove(tmp)
	}
	return err
}

// syncDir makes renames inside dir durable.
func syncDir(dir string) error {
	f, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer f.Close()
	if err := f.Sync(); err != nil {
		return fmt.Errorf("sync %s: %w", dir, err)
	}
	return nil
}

// recount fills m.Totals from m.Shards and m.Files.
func (m *Manifest) recount(splitPieces map[string]int64) {
	t := Totals{Splits: map[string]SplitTotals{}}
	for _, s := range Splits {
		t.Splits[s] = SplitTotals{Pieces: splitPieces[s]}
	}
	for _, sh := range m.Shards {
		st := t.Splits[sh.Split]
		st.Windows += sh.Rows
		st.Tokens += sh.Tokens
		st.Bytes += sh.Bytes
		st.Shards++
		t.Splits[sh.Split] = st
		t.Windows += sh.Rows
		t.Tokens += sh.Tokens
		t.Bytes += sh.Bytes
		t.Shards++
	}
	var ft fileTally
	for _, f := range m.Files {
		ft.add(f)
	}
	ft.addTo(&t)
	m.Totals = t
}

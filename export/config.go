package export

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"math"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/relpos"
	"github.com/relshard/relshard/tokenize"
)

// Config is the full resolved configuration of an export: everything that
// decides the bytes of the output, and nothing else (worker counts, progress and
// the part of a split run are run options, see Options). Its YAML layout is the
// config file's; its JSON form is listed in the manifest and hashed.
//
// The config file (YAML) has one section per stage:
//
//	input:   {pedal: true, min_notes: 1, max_file_mb: 64, ...}  see Input
//	tokens:  {encoding: performance, max_len: 2048, ...}        see tokenize.Config
//	buckets: {distance: [...], time: [...], pitch: [...]}       see relpos.Config
//	shards:  {mb: 128, compression: zstd, splits: {...}}        see Settings
type Config struct {
	Input   Input           `yaml:"input" json:"input"`     // reading and filtering the MIDI files
	Tokens  tokenize.Config `yaml:"tokens" json:"tokens"`   // encoding, windows, augmentation
	Buckets relpos.Config   `yaml:"buckets" json:"buckets"` // relative-position bucket schemes
	Shards  Settings        `yaml:"shards" json:"shards"`   // shard files and splits
}

// Input is the reading and filtering part of the config, in the config file's
// terms; Options turns it into ingest options. Zero limits mean ingest's defaults.
type Input struct {
	Pedal             bool    `yaml:"pedal" json:"pedal"`                               // extend notes to the sustain pedal release
	MaxEventsPerTrack int     `yaml:"max_events_per_track" json:"max_events_per_track"` // a track with more fails
	MaxFileMB         float64 `yaml:"max_file_mb" json:"max_file_mb"`                   // MIDI bytes of one file, after gunzip
	Strict            bool    `yaml:"strict" json:"strict"`                             // stop at the first bad file
	MinNotes          int     `yaml:"min_notes" json:"min_notes"`
	MaxNotes          int     `yaml:"max_notes" json:"max_notes"`
	MinSeconds        float64 `yaml:"min_seconds" json:"min_seconds"`
	MaxSeconds        float64 `yaml:"max_seconds" json:"max_seconds"`
	DropDrums         bool    `yaml:"drop_drums" json:"drop_drums"` // remove drum notes before filters and hashes
	MinPitch          int     `yaml:"min_pitch" json:"min_pitch"`
	MaxPitch          int     `yaml:"max_pitch" json:"max_pitch"`                     // 0: no upper bound
	MaxArchiveEntries int     `yaml:"max_archive_entries" json:"max_archive_entries"` // entries of one archive
	MaxEntryMB        float64 `yaml:"max_entry_mb" json:"max_entry_mb"`               // decompressed bytes of one entry
	MaxArchiveMB      float64 `yaml:"max_archive_mb" json:"max_archive_mb"`           // decompressed bytes of one archive
	MaxBufferedMB     float64 `yaml:"max_buffered_mb" json:"max_buffered_mb"`         // tar entries held while sorting
}

// DefaultInput returns ingest's defaults in config terms.
func DefaultInput() Input {
	o := ingest.DefaultOptions()
	return Input{
		Pedal: o.Parse.Pedal, MaxEventsPerTrack: o.Parse.MaxEventsPerTrack, MaxFileMB: mib(o.MaxFileSize),
		MinNotes: o.Filter.MinNotes, MaxNotes: o.Filter.MaxNotes, MinSeconds: o.Filter.MinSeconds, MaxSeconds: o.Filter.MaxSeconds,
		DropDrums: o.Filter.DropDrums, MinPitch: o.Filter.MinPitch, MaxPitch: o.Filter.MaxPitch,
		MaxArchiveEntries: o.Limits.MaxEntries, MaxEntryMB: mib(o.Limits.MaxEntrySize),
		MaxArchiveMB: mib(o.Limits.MaxTotalSize), MaxBufferedMB: mib(o.Limits.MaxBuffered),
	}
}

// Options returns the ingest options of the input config (workers and duplicate
// handling are set by the caller).
func (in Input) Options() ingest.Options {
	o := ingest.DefaultOptions()
	o.Parse.Pedal = in.Pedal
	o.Parse.MaxEventsPerTrack = in.MaxEventsPerTrack
	o.MaxFileSize = bytesOf(in.MaxFileMB)
	o.Strict = in.Strict
	o.Filter = ingest.Filter{MinNotes: in.MinNotes, MaxNotes: in.MaxNotes, MinSeconds: in.MinSeconds, MaxSeconds: in.MaxSeconds,
		DropDrums: in.DropDrums, MinPitch: in.MinPitch, MaxPitch: in.MaxPitch}
	o.Limits = ingest.Limits{MaxEntries: in.MaxArchiveEntries, MaxEntrySize: bytesOf(in.MaxEntryMB),
		MaxTotalSize: bytesOf(in.MaxArchiveMB), MaxBuffered: bytesOf(in.MaxBufferedMB)}
	return o
}

// Validate reports every invalid input setting.
func (in Input) Validate() error {
	var errs []error
	bad := func(format string, a ...any) { errs = append(errs, fmt.Errorf(format, a...)) }
	for _, f := range []struct {
		key string
		v   float64
	}{{"max_file_mb", in.MaxFileMB}, {"min_seconds", in.MinSeconds}, {"max_seconds", in.MaxSeconds},
		{"max_entry_mb", in.MaxEntryMB}, {"max_archive_mb", in.MaxArchiveMB}, {"max_buffered_mb", in.MaxBufferedMB}} {
		if f.v < 0 || math.IsNaN(f.v) || math.IsInf(f.v, 0) {
			bad("input.%s %v: want a finite number ≥ 0", f.key, f.v)
		}
	}
	for _, f := range []struct {
		key string
		v   int
	}{{"max_events_per_track", in.MaxEventsPerTrack}, {"min_notes", in.MinNotes}, {"max_notes", in.MaxNotes},
		{"max_archive_entries", in.MaxArchiveEntries}} {
		if f.v < 0 {
			bad("input.%s %d: want ≥ 0", f.key, f.v)
		}
	}
	if in.MinPitch < 0 || in.MinPitch > 127 || in.MaxPitch < 0 || in.MaxPitch > 127 {
		bad("input.min_pitch %d, max_pitch %d: want 0..127", in.MinPitch, in.MaxPitch)
	}
	if len(errs) > 0 {
		return fmt.Errorf("input config: %w", errors.Join(errs...))
	}
	return nil
}

func mib(b int64) float64 { return float64(b) / (1 << 20) }

func bytesOf(mb float64) int64 { return int64(mb * (1 << 20)) }

// Settings control the shard files and the splits.
type Settings struct {
	// Rows closes a shard at this many rows; zero means the size target MB decides.
	Rows int64 `yaml:"rows" json:"rows"`
	// MB closes a shard when its uncompressed payload (4 bytes per token id and
	// time, 2 per pitch and instrument, plus the strings) reaches this many MiB.
	// Files are smaller by the compression ratio. Used when Rows is zero.
	MB float64 `yaml:"mb" json:"mb"`
	// RowGroupMB is the uncompressed payload per row group, in MiB.
	RowGroupMB float64 `yaml:"row_group_mb" json:"row_group_mb"`
	// Compression is zstd, snappy or none.
	Compression string `yaml:"compression" json:"compression"`
	// Splits are the train/validation/test shares.
	Splits Ratios `yaml:"splits" json:"splits"`
	// KeepDuplicates exports duplicate files too (they land in the split of the
	// piece they duplicate); by default they are listed but not exported.
	KeepDuplicates bool `yaml:"keep_duplicates" json:"keep_duplicates"`
}

// Defaults of Settings.
const (
	DefaultShardMB    = 128
	DefaultRowGroupMB = 16
)

// DefaultSettings returns 128 MiB shards (of payload before compression; about
// 35 MB files with zstd on piano performances) of 16 MiB row groups, zstd, and 0.9/0.05/0.05 splits with duplicates dropped.
func DefaultSettings() Settings {
	return Settings{MB: DefaultShardMB, RowGroupMB: DefaultRowGroupMB, Compression: CompressionZstd, Splits: DefaultRatios}
}

// DefaultConfig returns the default config of every stage.
func DefaultConfig() Config {
	return Config{Input: DefaultInput(), Tokens: tokenize.DefaultConfig(), Buckets: relpos.DefaultConfig(), Shards: DefaultSettings()}
}

// Resolved returns the config with the defaults of zero fields filled in, the
// form that is hashed and listed in the manifest.
func (c Config) Resolved() Config {
	c.Buckets = c.Buckets.Resolved()
	return c
}

// Validate reports every invalid setting, naming its key.
func (c Config) Validate() error {
	var errs []error
	if err := c.Input.Validate(); err != nil {
		errs = append(errs, err)
	}
	if err := c.Tokens.Validate(); err != nil {
		errs = append(errs, err)
	}
	if err := c.Buckets.Validate(); err != nil {
		errs = append(errs, err)
	} else if c.Buckets.Sample > 0 && c.Buckets.Sample < 1 {
		// Sampled counts depend on the order pairs are met; export counts exactly
		// so that its manifest is the same for every worker count.
		errs = append(errs, fmt.Errorf("buckets.sample %v: export counts every pair; sampling is for the coverage command", c.Buckets.Sample))
	}
	if err := c.Shards.Validate(); err != nil {
		errs = append(errs, err)
	}
	return errors.Join(errs...)
}

// Validate reports every invalid shard setting.
func (s Settings) Validate() error {
	var errs []error
	bad := func(format string, a ...any) { errs = append(errs, fmt.Errorf(format, a...)) }
	if s.Rows < 0 {
		bad("shards.rows %d: want ≥ 0", s.Rows)
	}
	if s.Rows == 0 && !(s.MB > 0 && s.MB <= 1<<20) {
		bad("shards.mb %v: want 0 < mb ≤ 1048576 when shards.rows is 0", s.MB)
	}
	if !(s.RowGroupMB > 0) || math.IsInf(s.RowGroupMB, 0) {
		bad("shards.row_group_mb %v: want > 0", s.RowGroupMB)
	}
	if _, ok := codecs[s.Compression]; !ok {
		bad("shards.compression %q: want zstd, snappy or none", s.Compression)
	}
	if err := s.Splits.Validate(); err != nil {
		bad("shards.splits: %v", err)
	}
	if len(errs) > 0 {
		return fmt.Errorf("shard settings: %w", errors.Join(errs...))
	}
	return nil
}

// Hash returns the hex SHA-256 of the config's JSON form: two runs with the same
// hash make the same output from the same inputs.
func (c Config) Hash() string {
	data, err := json.Marshal(c)
	if err != nil {
		// Only a config that fails Validate (a NaN) can get here; its hash
		// matches nothing.
		return "invalid: " + err.Error()
	}
	sum := sha256.Sum256(data)
	return hex.EncodeToString(sum[:])
}

// shardBytes is the payload target of a shard in bytes (0 when Rows decides).
func (s Settings) shardBytes() int64 {
	if s.Rows > 0 {
		return 0
	}
	return int64(s.MB * (1 << 20))
}

func (s Settings) rowGroupBytes() int64 { return int64(s.RowGroupMB * (1 << 20)) }

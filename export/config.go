package export

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"math"

	"github.com/relshard/relshard/tokenize"
)

// Config is the full resolved configuration of an export: everything that
// decides the bytes of the output, and nothing else (worker counts, progress and
// the part of a split run are run options, see Options). Its YAML layout is the
// config file's; its JSON form is listed in the manifest and hashed.
type Config struct {
	Tokens tokenize.Config `yaml:"tokens" json:"tokens"` // encoding, windows, augmentation
	Shards Settings        `yaml:"shards" json:"shards"` // shard files and splits
}

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
	DefaultShardMB    = 256
	DefaultRowGroupMB = 16
)

// DefaultSettings returns 256 MiB shards (before compression) of 16 MiB row
// groups, zstd, and 0.9/0.05/0.05 splits with duplicates dropped.
func DefaultSettings() Settings {
	return Settings{MB: DefaultShardMB, RowGroupMB: DefaultRowGroupMB, Compression: CompressionZstd, Splits: DefaultRatios}
}

// DefaultConfig returns the default config of every stage.
func DefaultConfig() Config {
	return Config{Tokens: tokenize.DefaultConfig(), Shards: DefaultSettings()}
}

// Validate reports every invalid setting, naming its key.
func (c Config) Validate() error {
	var errs []error
	if err := c.Tokens.Validate(); err != nil {
		errs = append(errs, err)
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

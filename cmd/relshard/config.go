package main

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"

	"github.com/spf13/cobra"
	"go.yaml.in/yaml/v3"

	"github.com/relshard/relshard/export"
	"github.com/relshard/relshard/relpos"
)

// The config file, shared by every command that reads MIDI and encodes it
// (export, coverage, ...). It is YAML with one section per stage; every key is
// optional and an unknown key is an error:
//
//	input:    # reading and filtering (export.Input)
//	  min_notes: 16
//	  drop_drums: true
//	tokens:   # encoding, windows, augmentation (tokenize.Config)
//	  encoding: performance
//	  max_len: 1024
//	  transpose: [0, -2, 2]
//	buckets:  # relative-position schemes (relpos.Config)
//	  pairs: causal
//	sweep:    # the grid of relshard sweep (relpos.Grid); other commands ignore it
//	  time: {widths: [10, 20], clips: [32, 64], log: [{buckets: 32, max: 2048}]}
//	licenses: # dataset name -> licence/provenance text for the manifest
//	  lakh: "CC-BY 4.0, see https://example.org/terms"
//	shards:   # shard files and splits (export.Settings)
//	  mb: 128
//	  compression: zstd
//	  splits: {train: 0.9, validation: 0.05, test: 0.05}
//
// Precedence: defaults < config file < flags. A command loads the file with
// loadConfig, then applies only the flags the user set, for example:
//
//	cfg, err := loadConfig(opts.configPath)            // defaults + file
//	if err != nil { return err }                       // already a usage error with the file name
//	if cmd.Flags().Changed("max-len") { cfg.Tokens.MaxLen = opts.maxLen }
//	if err := cfg.Validate(); err != nil { ... }
//
// applyFlags does the Changed checks for a table of flag setters.

// configFile is the layout of the config file: the stage sections of
// export.Config plus the licence tags.
type configFile struct {
	export.Config `yaml:",inline"`
	Licenses      map[string]string `yaml:"licenses"`
	// Sweep is the grid of relshard sweep (the same keys as its flags: per kind
	// widths, clips and log settings); other commands ignore it.
	Sweep *relpos.Grid `yaml:"sweep"`
}

// loadConfig returns export.DefaultConfig() overlaid with the YAML config file at
// path; an empty path gives the defaults. Keys the file does not set keep their
// defaults; lists given in the file replace the default lists. The result is not
// yet validated (flags may still change it): call Validate after applying flags.
// Errors name the file and, for YAML errors, the line; they carry exit status 2.
func loadConfig(path string) (export.Config, error) {
	cf, err := loadConfigFile(path)
	return cf.Config, err
}

// loadConfigFile is loadConfig that also returns the file's licence tags.
func loadConfigFile(path string) (configFile, error) {
	cf := configFile{Config: export.DefaultConfig()}
	if path == "" {
		return cf, nil
	}
	data, err := os.ReadFile(path)
	if err != nil {
		return cf, &exitError{code: exitUsage, err: fmt.Errorf("config: %w", err)}
	}
	if err := decodeConfig(data, &cf); err != nil {
		return cf, &exitError{code: exitUsage, err: fmt.Errorf("config %s: %w", path, err)}
	}
	return cf, nil
}

// decodeConfig decodes YAML strictly: unknown keys and a second document are
// errors, an empty file is the defaults.
func decodeConfig(data []byte, cf *configFile) error {
	dec := yaml.NewDecoder(bytes.NewReader(data))
	dec.KnownFields(true)
	if err := dec.Decode(cf); err != nil {
		if errors.Is(err, io.EOF) {
			return nil
		}
		return err
	}
	var extra yaml.Node
	if err := dec.Decode(&extra); !errors.Is(err, io.EOF) {
		return errors.New("more than one YAML document")
	}
	return nil
}

// flagSetter sets one config field from the value of its flag.
type flagSetter struct {
	flag string
	set  func(*export.Config)
}

// applyFlags calls the setters of the flags the user set on the command line, so
// flags win over the config file and unset flags leave the file's values.
func applyFlags(cmd *cobra.Command, cfg *export.Config, setters []flagSetter) {
	for _, s := range setters {
		if cmd.Flags().Changed(s.flag) {
			s.set(cfg)
		}
	}
}

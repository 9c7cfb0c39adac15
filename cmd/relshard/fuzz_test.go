package main

import (
	"bytes"
	"testing"

	"github.com/relshard/relshard/export"
	"github.com/relshard/relshard/relpos"
	"github.com/relshard/relshard/tokenize"
)

// FuzzDecodeConfig feeds arbitrary bytes to the YAML config reader and, where they
// decode and validate, builds what the commands build from a config: the encoder,
// the coverage counter and the sweep grid's configs. None of it may panic; a config
// that validates must give an encoder and a counter.
func FuzzDecodeConfig(f *testing.F) {
	for _, seed := range []string{
		"",
		"input:\n  min_notes: 10\ntokens:\n  max_len: 512\n  transpose: [0, 2]\nshards:\n  compression: snappy\n",
		"tokens: {encoding: grid, grid_per_quarter: 12}\n",
		"buckets:\n  time:\n    scheme: log\n",
		"sweep:\n  time:\n    widths: [10, 20]\n    clips: [100, 1000]\n",
		"shards:\n  splits: {train: 0.8, validation: 0.1, test: 0.1}\n",
		"tokens: {max_len: 64}\n---\ntokens: {max_len: 32}\n",
		"tokens:\n  max_lenn: 3\n",
		"licenses: {demo: CC0}\n",
	} {
		f.Add([]byte(seed))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		cf := configFile{Config: export.DefaultConfig()}
		if err := decodeConfig(data, &cf); err != nil {
			return
		}
		if cf.Sweep != nil {
			grid := overlayGrid(relpos.DefaultGrid(), *cf.Sweep)
			if sc, err := relpos.SweepConfig(cf.Buckets, grid); err == nil && sc.Validate() == nil {
				if _, err := relpos.NewCounter(sc); err != nil {
					t.Fatalf("sweep config validates but gives no counter: %v", err)
				}
			}
		}
		cfg := cf.Config.Resolved()
		if cfg.Validate() != nil {
			return
		}
		if _, err := tokenize.NewEncoder(cfg.Tokens); err != nil {
			t.Fatalf("config validates but gives no encoder: %v", err)
		}
		if _, err := relpos.NewCounter(cfg.Buckets); err != nil {
			t.Fatalf("config validates but gives no counter: %v", err)
		}
	})
}

// FuzzReadTokens feeds arbitrary bytes to the reader of relshard decode's input and
// decodes what it reads, as runDecode does: errors are fine, panics are not.
func FuzzReadTokens(f *testing.F) {
	for _, seed := range []string{
		`[1, 3, 200, 2]`,
		`[{"id": 1, "label": "begin"}, {"id": 2}]`,
		`{"config": {"encoding": "grid"}, "tokens": [1, 5, 9, 2]}`,
		`{"tokens": []}`,
		`{"config": {"max_len": -1}, "tokens": [1]}`,
		`[1, "x"]`,
		`{}`,
		"\n\t[\n1,\n2]",
	} {
		f.Add([]byte(seed))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		ids, labels, fileCfg, err := readTokens("-", bytes.NewReader(data))
		if err != nil {
			return
		}
		if len(labels) != len(ids) {
			t.Fatalf("%d labels for %d ids", len(labels), len(ids))
		}
		cfg := tokenize.DefaultConfig()
		if fileCfg != nil {
			if fileCfg.Validate() != nil {
				return
			}
			cfg = *fileCfg
		}
		d, err := tokenize.NewDecoder(cfg)
		if err != nil {
			t.Fatalf("config validates but gives no decoder: %v", err)
		}
		v, err := tokenize.NewVocab(cfg)
		if err != nil {
			t.Fatalf("config validates but gives no vocabulary: %v", err)
		}
		for _, id := range ids {
			_ = v.Label(id)
		}
		if p, err := d.Decode(ids); err == nil {
			var buf bytes.Buffer
			if err := tokenize.WriteSMF(&buf, p); err != nil {
				t.Fatalf("decoded piece does not write: %v", err)
			}
		}
	})
}

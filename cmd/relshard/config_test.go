package main

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/relshard/relshard/export"
)

func TestLoadConfig(t *testing.T) {
	dir := t.TempDir()
	write := func(name, text string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	want := export.DefaultConfig()
	want.Tokens.MaxLen = 512
	want.Tokens.Transpose = []int{0, 2}
	want.Shards.Compression = "snappy"
	want.Shards.Splits = export.Ratios{Train: 0.8, Validation: 0.1, Test: 0.1}
	want.Input.MinNotes = 10

	tests := []struct {
		name    string
		text    string
		want    export.Config
		wantErr string
	}{
		{name: "empty file is the defaults", text: "", want: export.DefaultConfig()},
		{name: "sections overlay the defaults", text: `
input:
  min_notes: 10
tokens:
  max_len: 512
  transpose: [0, 2]
shards:
  compression: snappy
  splits: {train: 0.8, validation: 0.1, test: 0.1}
`, want: want},
		{name: "unknown key", text: "tokens:\n  max_lenn: 3\n", wantErr: "line 2"},
		{name: "unknown section", text: "token:\n  max_len: 3\n", wantErr: "token"},
		{name: "two documents", text: "tokens: {max_len: 64}\n---\ntokens: {max_len: 32}\n", wantErr: "more than one"},
		{name: "bad type", text: "shards:\n  mb: lots\n", wantErr: "line 2"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := loadConfig(write(strings.ReplaceAll(tc.name, " ", "_")+".yaml", tc.text))
			if tc.wantErr != "" {
				var ee *exitError
				if err == nil || !strings.Contains(err.Error(), tc.wantErr) || !errors.As(err, &ee) || ee.code != exitUsage {
					t.Fatalf("err %v, want a usage error containing %q", err, tc.wantErr)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if got.Hash() != tc.want.Hash() {
				t.Errorf("got %+v\nwant %+v", got, tc.want)
			}
		})
	}
	if _, err := loadConfig(filepath.Join(dir, "missing.yaml")); err == nil {
		t.Error("missing file accepted")
	}
	cfg, err := loadConfig("")
	if err != nil || cfg.Hash() != export.DefaultConfig().Hash() {
		t.Errorf("empty path: %v, %v", cfg, err)
	}
}

func TestLoadConfigLicenses(t *testing.T) {
	p := filepath.Join(t.TempDir(), "c.yaml")
	os.WriteFile(p, []byte("licenses:\n  demo: generated, public domain\n"), 0o644)
	cf, err := loadConfigFile(p)
	if err != nil {
		t.Fatal(err)
	}
	if got := cf.Licenses["demo"]; got != "generated, public domain" {
		t.Errorf("licence %q", got)
	}
}

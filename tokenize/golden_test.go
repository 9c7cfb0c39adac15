package tokenize

import (
	"bytes"
	"encoding/json"
	"flag"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// golden compares got with testdata/name, or rewrites it under -update.
func golden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", name)
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs from the golden file (go test -update rewrites it)\n got %.400s\nwant %.400s", name, got, want)
	}
}

// goldenPiece is a short phrase with chords, a rest, a drum and a meter change.
func goldenPiece(t *testing.T) []string {
	return []string{"0:480:60:90", "0:480:64:70", "480:240:67:100", "720:240:65:60", "d0:120:36:110",
		"d480:120:38:90", "p33/1440:1440:36:80", "p33/2880:960:43:85"}
}

// TestGoldenStreams pins the id streams of the golden piece; they also seed FuzzDecode.
func TestGoldenStreams(t *testing.T) {
	for _, enc := range []string{Performance, Grid} {
		cfg := DefaultConfig()
		cfg.Encoding = enc
		cfg.Drums = DrumsKeep
		e := mustEncoder(t, cfg)
		s, _, err := e.Encode(piece(t, goldenPiece(t)...), Identity, nil)
		if err != nil {
			t.Fatal(err)
		}
		var b strings.Builder
		for i, id := range ids(s) {
			if i > 0 {
				b.WriteByte(' ')
			}
			b.WriteString(strconv.Itoa(int(id)))
		}
		b.WriteByte('\n')
		golden(t, enc+".ids", []byte(b.String()))
	}
}

func TestGoldenVocab(t *testing.T) {
	for _, enc := range []string{Performance, Grid} {
		cfg := DefaultConfig()
		cfg.Encoding = enc
		v, err := NewVocab(cfg)
		if err != nil {
			t.Fatal(err)
		}
		data, err := json.MarshalIndent(v, "", " ")
		if err != nil {
			t.Fatal(err)
		}
		golden(t, "vocab_"+enc+".json", append(data, '\n'))
	}
}

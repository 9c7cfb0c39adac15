package ingest

import (
	"archive/tar"
	"bytes"
	"context"
	"flag"
	"os"
	"path/filepath"
	"reflect"
	"testing"
)

var updateSources = flag.Bool("update-sources", false, "rewrite testdata/sources from the fixture builders")

// sourceFixtures are the files of testdata/sources: a small demo folder and archives,
// good and hostile, that seed FuzzArchive and back ExampleScan. They are built in code
// (gomidi's writer for SMF, the standard library for archives) and compared byte for
// byte with the committed copies; go test -run TestSourceFixtures -update-sources
// rewrites them.
func sourceFixtures(t testing.TB) map[string][]byte {
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	other := fxSMF(t, 480, false, fxOther(480))
	drums := fxSMF(t, 120, false, []fxNote{{Start: 0, Dur: 60, Key: 36, Vel: 100, Channel: 9}, {Start: 60, Dur: 60, Key: 38, Vel: 100, Channel: 9}, {Start: 120, Dur: 60, Key: 42, Vel: 90, Channel: 9}})
	up := fxSMF(t, 192, false, fxTune(192, 4))
	return map[string][]byte{
		"demo/a.mid":        tune,
		"demo/b.mid.gz":     fxGzip(t, other),
		"demo/broken.mid":   tune[:30],
		"demo/copy.MID":     tune,
		"demo/readme.txt":   []byte("Fixtures for ingest tests; not MIDI, so a folder scan ignores this file.\n"),
		"demo/songs.zip":    fxZip(t, fxZipEntry{Name: "drums.mid", Data: drums}, fxZipEntry{Name: "up.mid", Data: up}, fxZipEntry{Name: "notes.txt", Data: []byte("x")}),
		"good.tar":          fxTar(t, false, fxTarEntry{Name: "b/other.mid", Data: other}, fxTarEntry{Name: "a/tune.mid", Data: tune}),
		"good.tgz":          fxTar(t, true, fxTarEntry{Name: "drums.mid.gz", Data: fxGzip(t, drums)}, fxTarEntry{Name: "tune.midi", Data: tune}),
		"good.zip":          fxZip(t, fxZipEntry{Name: "z/tune.mid", Data: tune}, fxZipEntry{Name: "other.smf", Data: other}),
		"hostile.tar":       fxTar(t, false, fxTarEntry{Name: "../../etc/x.mid", Data: tune}, fxTarEntry{Name: "/abs.mid", Data: tune}, fxTarEntry{Name: "l.mid", Type: tar.TypeSymlink, Link: "/etc/passwd"}, fxTarEntry{Name: "h.mid", Type: tar.TypeLink, Link: "l.mid"}, fxTarEntry{Name: "bomb.mid.gz", Data: fxGzip(t, make([]byte, 2<<20))}),
		"hostile.zip":       fxZip(t, fxZipEntry{Name: "../up.mid", Data: tune}, fxZipEntry{Name: "s.mid", Data: []byte("x"), Mode: os.ModeSymlink | 0o777}, fxZipEntry{Name: "bomb.mid", Data: make([]byte, 2<<20)}),
		"truncated.tar.gz":  fxTar(t, true, fxTarEntry{Name: "a.mid", Data: tune}, fxTarEntry{Name: "b.mid", Data: other})[:60],
		"notgzip.tgz":       tune,
		"corrupt.zip":       fxZip(t, fxZipEntry{Name: "a.mid", Data: tune})[:40],
		"demo/sub/list.lst": []byte("../a.mid\n"), // a list inside a folder is not read: not a MIDI name
	}
}

func TestSourceFixtures(t *testing.T) {
	root := filepath.Join("testdata", "sources")
	for name, want := range sourceFixtures(t) {
		p := filepath.Join(root, filepath.FromSlash(name))
		if *updateSources {
			os.MkdirAll(filepath.Dir(p), 0o755)
			if err := os.WriteFile(p, want, 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		got, err := os.ReadFile(p)
		if err != nil {
			t.Fatalf("%v (run go test -run TestSourceFixtures -update-sources)", err)
		}
		if !bytes.Equal(got, want) {
			t.Errorf("%s differs from its builder (run go test -run TestSourceFixtures -update-sources)", p)
		}
	}
}

// fuzzOptions are small caps so that fuzzing explores them.
func fuzzOptions(workers int) Options {
	opts := DefaultOptions()
	opts.Workers = workers
	opts.MaxFileSize = 1 << 20
	opts.Limits = Limits{MaxEntries: 64, MaxEntrySize: 1 << 20, MaxTotalSize: 4 << 20, MaxBuffered: 64 << 10}
	return opts
}

// FuzzArchive reads arbitrary bytes as a zip, a tar and (gzipped) a .tgz: no
// panic, no error from Scan, every record with a status (and a reason when skipped),
// paths sorted, and the same records for 1 and 3 workers.
func FuzzArchive(f *testing.F) {
	matches, _ := filepath.Glob(filepath.Join("testdata", "sources", "*"))
	for _, m := range matches {
		if data, err := os.ReadFile(m); err == nil { // folders fail here and are left out
			f.Add(data)
		}
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		dir := t.TempDir()
		var sources []Source
		for _, name := range []string{"in.zip", "in.tar", "in.tgz"} {
			p := filepath.Join(dir, name)
			b := data
			if name == "in.tgz" {
				b = fxGzip(t, data) // so that the tar reader runs behind gzip
			}
			if err := os.WriteFile(p, b, 0o644); err != nil {
				t.Fatal(err)
			}
			sources = append(sources, Source{Path: p})
		}
		run := func(workers int) []FileRecord {
			var recs []FileRecord
			err := Scan(context.Background(), sources, fuzzOptions(workers), func(r *Result) error {
				recs = append(recs, r.Record)
				return nil
			})
			if err != nil {
				t.Fatalf("Scan: %v", err)
			}
			return recs
		}
		recs := run(1)
		last := map[string]string{}
		for _, r := range recs {
			switch r.Status {
			case StatusOK, StatusDuplicate:
			case StatusSkipped:
				if r.Reason == "" {
					t.Errorf("%s/%s skipped without a reason", r.Dataset, r.Path)
				}
			default:
				t.Errorf("%s/%s: status %q", r.Dataset, r.Path, r.Status)
			}
			if r.Path != "" && r.Path < last[r.Source] {
				t.Errorf("%s: %q after %q", r.Source, r.Path, last[r.Source])
			}
			last[r.Source] = r.Path
		}
		if again := run(3); !reflect.DeepEqual(again, recs) {
			t.Errorf("records differ between 1 and 3 workers")
		}
	})
}

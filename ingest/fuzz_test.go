package ingest

import (
	"bytes"
	"flag"
	"os"
	"path/filepath"
	"runtime"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the testdata fixtures from the test builders")

// fixtures are the files in testdata/, built by the test helpers; they seed the fuzz
// targets. Run `go test ./ingest -run TestFixtures -update` after changing a builder.
func fixtures() map[string][]byte {
	notes := cat([]byte{0x00, 0x90, 60, 100, 0x60, 0x80, 60, 0}, eot)
	return map[string][]byte{
		"spec-format0.mid":       specFormat0(),
		"spec-format1.mid":       specFormat1(),
		"format2.mid":            smf(2, 96, notes, cat([]byte{0x00, 0xFF, 0x51, 0x03, 0x0F, 0x42, 0x40}, notes)),
		"smpte-25x40.mid":        smf(0, 0xE728, notes),
		"header-length-8.mid":    cat([]byte("MThd\x00\x00\x00\x08\x00\x00\x00\x01\x00\x60\x00\x00"), chunk("MTrk", notes)),
		"riff.rmi":               riff(specFormat0()),
		"sysex-packets.mid":      smf(0, 96, cat([]byte{0x00, 0xF0, 0x02, 0x43, 0x12, 0x10, 0xF7, 0x02, 0x00, 0xF7}, notes)),
		"pedal.mid":              smf(0, 96, cat([]byte{0x00, 0xB0, 64, 127, 0x00, 0x90, 60, 90, 0x0A, 0x80, 60, 0, 0x14, 0xB0, 64, 0}, eot)),
		"bad-vlq.mid":            smf(0, 96, cat([]byte{0x81, 0x81, 0x81, 0x81, 0x00, 0x90, 60, 100}, eot)),
		"bad-running-status.mid": smf(0, 96, cat([]byte{0x00, 0x3C, 0x40}, eot)),
		"bad-sysex-open.mid":     smf(0, 96, cat([]byte{0x00, 0xF0, 0x03, 0x43, 0x12, 0x00}, eot)),
		"bad-huge-sysex.mid":     smf(0, 96, []byte{0x00, 0xF0, 0xFF, 0xFF, 0xFF, 0xFF, 0x0F, 0x00, 0x00, 0x00, 0xFF, 0x2F, 0x00}),
		"bad-huge-meta.mid":      smf(0, 96, cat([]byte{0x00, 0xFF, 0x01, 0xFF, 0xFF, 0xFF, 0x7F, 0x00}, eot)),
		"bad-more-tracks.mid":    cat(header(1, 3, 96), chunk("MTrk", notes)),
	}
}

func TestFixtures(t *testing.T) {
	for name, want := range fixtures() {
		path := filepath.Join("testdata", name)
		if *update {
			if err := os.WriteFile(path, want, 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		got, err := os.ReadFile(path)
		if err != nil {
			t.Fatalf("%v (run with -update to create the fixtures)", err)
		}
		if !bytes.Equal(got, want) {
			t.Errorf("%s is out of date: run go test ./ingest -run TestFixtures -update", path)
		}
		_, perr := Parse(name, got, DefaultParseOptions())
		if bad := len(name) > 4 && name[:4] == "bad-"; bad != (perr != nil) {
			t.Errorf("%s: error %v", name, perr)
		}
	}
}

// addSeeds adds every file of testdata/ to the fuzz corpus.
func addSeeds(f *testing.F) {
	paths, err := filepath.Glob(filepath.Join("testdata", "*.*"))
	if err != nil || len(paths) == 0 {
		f.Fatalf("no seed files in testdata/ (%v)", err)
	}
	for _, p := range paths {
		data, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(data)
	}
}

// FuzzIngest checks that Parse never panics, that errors are positional, that its
// output keeps its invariants, and that it allocates a bounded multiple of the input.
func FuzzIngest(f *testing.F) {
	addSeeds(f)
	f.Fuzz(func(t *testing.T, data []byte) {
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		ps, err := Parse("fuzz.mid", data, DefaultParseOptions())
		runtime.ReadMemStats(&after)
		// Note is 48 bytes; a note needs at least 3 input bytes: 16x plus fixed costs
		if a := after.TotalAlloc - before.TotalAlloc; a > 64*uint64(len(data))+1<<20 {
			t.Errorf("allocated %d bytes for %d input bytes", a, len(data))
		}
		if err != nil {
			if !errIsOurs(err) {
				t.Fatalf("error %v is not a *ParseError", err)
			}
			return
		}
		for _, p := range ps {
			for i, n := range p.Notes {
				if n.EndTick < n.StartTick || n.End < n.Start || n.StartTick < 0 {
					t.Fatalf("note %d: %+v", i, n)
				}
				if i > 0 {
					m := p.Notes[i-1]
					if m.StartTick > n.StartTick || (m.StartTick == n.StartTick && m.Track > n.Track) {
						t.Fatalf("notes %d and %d out of order: %+v %+v", i-1, i, m, n)
					}
					if m.Start > n.Start {
						t.Fatalf("seconds not monotone at %d", i)
					}
				}
				if n.EndTick > p.EndTick {
					t.Fatalf("note %d ends at %d after the piece's end %d", i, n.EndTick, p.EndTick)
				}
			}
		}
	})
}

// FuzzDiffGomidi compares our reader with gomidi's on every input where that is safe
// (see gomidi_diff_test.go for the documented differences); neither may panic on
// inputs we accept cleanly.
func FuzzDiffGomidi(f *testing.F) {
	addSeeds(f)
	f.Fuzz(func(t *testing.T, data []byte) {
		checkGomidi(t, data)
	})
}

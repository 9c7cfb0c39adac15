package audit_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/relpos/audit"
)

func ExampleDetectGrid() {
	// Sixteenth notes at 480 ticks per quarter: one every 120 ticks.
	onsets := []int64{0, 120, 240, 360, 480, 600, 720, 840, 960, 1080}
	g := audit.DetectGrid(onsets, 480, audit.DefaultGridConfig())
	fmt.Println(g.Label, g.Division, g.Share)

	// Eighth-note triplets: one every 160 ticks.
	onsets = []int64{0, 160, 320, 480, 640, 800, 960, 1120, 1280, 1440}
	g = audit.DetectGrid(onsets, 480, audit.DefaultGridConfig())
	fmt.Println(g.Label, g.Division)
	// Output:
	// on a 1/16 grid 4 1
	// triplet grid (1/8 triplets) 3
}

func ExampleJensenShannon() {
	// Disjoint distributions are ln 2 apart, identical ones 0.
	fmt.Printf("%.4f %.4f\n", audit.JensenShannon([]int64{3, 0}, []int64{0, 5}), audit.JensenShannon([]int64{1, 2}, []int64{2, 4}))
	// Output: 0.6931 0.0000
}

// tinySMF is a format-0 Standard MIDI File at 480 ticks per quarter with n
// sixteenth notes of middle C, built byte by byte after SMF 1.0.
func tinySMF(n int) []byte {
	var track []byte
	for range n {
		track = append(track, 0x00, 0x90, 60, 96) // delta 0, note-on
		track = append(track, 0x78, 0x80, 60, 0)  // delta 120, note-off
	}
	track = append(track, 0x00, 0xFF, 0x2F, 0x00) // end of track
	out := []byte{'M', 'T', 'h', 'd', 0, 0, 0, 6, 0, 0, 0, 1, 0x01, 0xE0, 'M', 'T', 'r', 'k'}
	l := len(track)
	out = append(out, byte(l>>24), byte(l>>16), byte(l>>8), byte(l))
	return append(out, track...)
}

func ExampleRun() {
	dir, err := os.MkdirTemp("", "audit-example")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer os.RemoveAll(dir)
	if err := os.WriteFile(filepath.Join(dir, "etude.mid"), tinySMF(32), 0o644); err != nil {
		fmt.Println(err)
		return
	}
	rep, err := audit.Run(context.Background(), []ingest.Source{{Path: dir, Dataset: "etudes"}}, audit.DefaultConfig())
	if err != nil {
		fmt.Println(err)
		return
	}
	d := rep.Datasets[0]
	f := rep.Files[0]
	fmt.Println(d.Name, d.Read, "file,", f.Notes, "notes,", f.Grid.Label)
	fmt.Println("median inter-onset interval:", d.IOI.P50, d.IOI.Unit) // a sixteenth at 120 BPM
	fmt.Println("missing meter:", f.MissingMeter)
	// Output:
	// etudes 1 file, 32 notes, on a 1/16 grid
	// median inter-onset interval: 125 ms
	// missing meter: true
}

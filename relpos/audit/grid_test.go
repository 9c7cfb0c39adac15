package audit

import (
	"bufio"
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/relshard/relshard/ingest"
)

func TestGridLabel(t *testing.T) {
	// Note values of beat subdivisions with the quarter note as the beat (common
	// practice): four steps per quarter are sixteenths, three are eighth-note triplets.
	tests := []struct {
		n    int
		want string
	}{
		{0, LabelUnquantized},
		{1, "on a 1/4 grid"},
		{2, "on a 1/8 grid"},
		{3, "triplet grid (1/8 triplets)"},
		{4, "on a 1/16 grid"},
		{6, "triplet grid (1/16 triplets)"},
		{8, "on a 1/32 grid"},
		{12, "triplet grid (1/32 triplets)"},
		{16, "on a 1/64 grid"},
		{24, "triplet grid (1/64 triplets)"},
		{32, "on a 1/128 grid"},
		{5, "on a 1/5-beat grid"},
	}
	for _, tc := range tests {
		if got := GridLabel(tc.n); got != tc.want {
			t.Errorf("GridLabel(%d) = %q, want %q", tc.n, got, tc.want)
		}
	}
}

func TestDetectGrid(t *testing.T) {
	cfg := DefaultGridConfig()
	seq := func(ppq int, steps ...int64) []int64 {
		var out []int64
		for bar := int64(0); bar < 4; bar++ {
			for _, s := range steps {
				out = append(out, bar*4*int64(ppq)+s)
			}
		}
		return out
	}
	tests := []struct {
		name   string
		onsets []int64
		ppq    int
		want   int
		label  string
	}{
		// 480 PPQ: a sixteenth is 120 ticks, an eighth-note triplet 160 (common practice).
		{"sixteenths", seq(480, 0, 120, 240, 360, 480, 960, 1080), 480, 4, "on a 1/16 grid"},
		{"quarters", seq(480, 0, 480, 960, 1440), 480, 1, "on a 1/4 grid"},
		{"eighth triplets", seq(480, 0, 160, 320, 480, 640, 800), 480, 3, "triplet grid (1/8 triplets)"},
		// Sixteenths and eighth triplets together need twelve steps per quarter.
		{"mixed", seq(96, 0, 24, 48, 72, 96, 128, 160), 96, 12, "triplet grid (1/32 triplets)"},
		// 256 PPQ has no exact triplet tick; 85 and 171 sit within a tenth of a step.
		{"triplets at 256", seq(256, 0, 85, 171, 256, 341, 427), 256, 3, "triplet grid (1/8 triplets)"},
		// Ticks up to 3 off at 480 PPQ stay within a tenth of a sixteenth step (12 ticks).
		{"jittered sixteenths", seq(480, 3, 122, 238, 361, 480, 957, 1080), 480, 4, "on a 1/16 grid"},
		{"free", seq(480, 0, 37, 95, 211, 260, 333, 401, 555, 602, 777), 480, 0, LabelUnquantized},
		{"few", []int64{0, 120}, 480, 0, LabelFewOnsets},
		{"smpte", seq(480, 0, 120), 0, 0, LabelNoBeat},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			g := DetectGrid(tc.onsets, tc.ppq, cfg)
			if g.Division != tc.want || g.Label != tc.label {
				t.Errorf("DetectGrid = %d %q (share %.2f, %+v), want %d %q", g.Division, g.Label, g.Share, g.Shares, tc.want, tc.label)
			}
		})
	}
}

// midicsvOnsets runs midicsv on a file and returns the header's division and the
// ticks of every note-on with a non-zero velocity (a note-on with velocity 0 is a
// note-off, SMF 1.0).
func midicsvOnsets(t *testing.T, path string) (ppq int, ticks []int64) {
	t.Helper()
	out, err := exec.Command(midicsvPath, path).Output()
	if err != nil {
		t.Fatalf("midicsv %s: %v", path, err)
	}
	sc := bufio.NewScanner(bytes.NewReader(out))
	sc.Buffer(make([]byte, 1<<20), 1<<20)
	for sc.Scan() {
		f := strings.Split(sc.Text(), ",")
		if len(f) < 3 {
			continue
		}
		for i := range f {
			f[i] = strings.TrimSpace(f[i])
		}
		switch f[2] {
		case "Header": // track, time, Header, format, tracks, division
			ppq, err = strconv.Atoi(f[5])
		case "Note_on_c": // track, time, Note_on_c, channel, note, velocity
			var tick, vel int
			if tick, err = strconv.Atoi(f[1]); err == nil {
				if vel, err = strconv.Atoi(f[5]); err == nil && vel > 0 {
					ticks = append(ticks, int64(tick))
				}
			}
		}
		if err != nil {
			t.Fatalf("midicsv %s: line %q: %v", path, sc.Text(), err)
		}
	}
	return ppq, ticks
}

// expectedGrid derives the grid from midicsv's ticks on its own terms, in integers:
// the coarsest division N whose grid holds at least 95% of the note-on ticks within a
// tenth of a step. A tick t is that close when the distance of t·N to the nearest
// multiple of the division is at most a tenth of the division.
func expectedGrid(ppq int, ticks []int64) int {
	best := 0
	for _, n := range []int{1, 2, 3, 4, 6, 8, 12, 16, 24, 32} {
		hits := 0
		for _, t := range ticks {
			r := (t * int64(n)) % int64(ppq)
			if d := min(r, int64(ppq)-r); 10*d <= int64(ppq) {
				hits++
			}
		}
		if 100*hits >= 95*len(ticks) && (best == 0 || n < best) {
			best = n
		}
	}
	return best
}

// On the real files of Debian's openttd-openmsx, the grid found from our parse
// equals the grid derived from the note-on ticks that Debian's midicsv prints.
func TestGridOpenMSX(t *testing.T) {
	files := openmsxFiles(t)
	needMidicsv(t)
	a, err := New(DefaultConfig())
	if err != nil {
		t.Fatal(err)
	}
	kinds := map[int]int{}
	for _, path := range files {
		ppq, ticks := midicsvOnsets(t, path)
		data, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		pieces, err := ingest.Parse(filepath.Base(path), data, ingest.DefaultParseOptions())
		if err != nil {
			t.Fatalf("parse %s: %v", path, err)
		}
		if len(pieces) != 1 {
			t.Fatalf("%s: %d pieces, want 1", path, len(pieces))
		}
		p := &pieces[0]
		if p.TicksPerQuarter != ppq || len(p.Notes) != len(ticks) {
			t.Fatalf("%s: parse gives PPQ %d and %d notes, midicsv %d and %d note-ons", path, p.TicksPerQuarter, len(p.Notes), ppq, len(ticks))
		}
		if err := a.AddPiece("openmsx", filepath.Base(path), p); err != nil {
			t.Fatal(err)
		}
		got := a.files[len(a.files)-1].Grid
		want := expectedGrid(ppq, ticks)
		if got.Division != want || got.Label != GridLabel(want) {
			t.Errorf("%s (PPQ %d): grid %d %q (share %.3f), midicsv ticks give %d %q", filepath.Base(path), ppq, got.Division, got.Label, got.Share, want, GridLabel(want))
		}
		kinds[want]++
	}
	// The check means something only if the files differ: some straight, some
	// triplet, some unquantized.
	if len(kinds) < 3 {
		t.Errorf("expected grids %v: fewer than three kinds; the check is too weak", kinds)
	}
	t.Logf("grids from midicsv: %v", kinds)
}

package tokenize

import (
	"cmp"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/relshard/relshard/ingest"
)

// refDir holds the MIDI files of Debian's openttd-openmsx package.
const refDir = "/usr/share/games/openttd/baseset/openmsx"

// refFiles returns the reference files, skipping the test when they are absent
// (failing instead under RELSHARD_REQUIRE_REFS=1).
func refFiles(t testing.TB) []string {
	t.Helper()
	files, _ := filepath.Glob(filepath.Join(refDir, "*.mid"))
	if len(files) == 0 {
		msg := "no reference MIDI files in " + refDir + " (install Debian package openttd-openmsx)"
		if os.Getenv("RELSHARD_REQUIRE_REFS") == "1" {
			t.Fatal(msg)
		}
		t.Skip(msg)
	}
	return files
}

// refPieces parses every reference file with ingest.Parse.
func refPieces(t testing.TB) (names []string, pieces []ingest.Piece) {
	t.Helper()
	for _, f := range refFiles(t) {
		data, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		ps, err := ingest.Parse(filepath.Base(f), data, ingest.DefaultParseOptions())
		if err != nil {
			t.Fatalf("parse %s: %v", f, err)
		}
		for range ps {
			names = append(names, filepath.Base(f))
		}
		pieces = append(pieces, ps...)
	}
	return names, pieces
}

// piece builds a 120 BPM piece at 480 ticks per quarter, so a tick is 1/960 s, from
// notes given as "tick:length:key:velocity" (velocity optional, 80), with "d" before
// the tick for a drum and "p<program>/" before it for a program.
func piece(t testing.TB, notes ...string) *ingest.Piece {
	t.Helper()
	p := &ingest.Piece{TicksPerQuarter: 480, Format: 1}
	for _, s := range notes {
		n := ingest.Note{Velocity: 80}
		if rest, ok := strings.CutPrefix(s, "d"); ok {
			n.Drum, n.Channel, s = true, 9, rest
		}
		if rest, ok := strings.CutPrefix(s, "p"); ok {
			prog, after, _ := strings.Cut(rest, "/")
			v, err := strconv.Atoi(prog)
			if err != nil {
				t.Fatalf("note %q: %v", s, err)
			}
			n.Program, s = uint8(v), after
		}
		f := strings.Split(s, ":")
		num := func(i int) int64 {
			v, err := strconv.ParseInt(f[i], 10, 64)
			if err != nil {
				t.Fatalf("note %q: %v", s, err)
			}
			return v
		}
		n.StartTick = num(0)
		n.EndTick = n.StartTick + num(1)
		n.Pitch = uint8(num(2))
		if len(f) > 3 {
			n.Velocity = uint8(num(3))
		}
		n.Start, n.End = float64(n.StartTick)/960, float64(n.EndTick)/960
		p.Notes = append(p.Notes, n)
	}
	return p
}

// labels spells a stream as "label@time" words.
func labels(v *Vocab, s []Token) string {
	var b strings.Builder
	for i, t := range s {
		if i > 0 {
			b.WriteByte(' ')
		}
		b.WriteString(v.Label(t.ID))
		b.WriteByte('@')
		b.WriteString(strconv.Itoa(int(t.Time)))
	}
	return b.String()
}

func ids(s []Token) []int32 {
	out := make([]int32, len(s))
	for i, t := range s {
		out[i] = t.ID
	}
	return out
}

func mustEncoder(t testing.TB, cfg Config) *Encoder {
	t.Helper()
	e, err := NewEncoder(cfg)
	if err != nil {
		t.Fatal(err)
	}
	return e
}

func gridConfig() Config {
	c := DefaultConfig()
	c.Encoding = Grid
	return c
}

func isDecodeError(err error) bool {
	var de *DecodeError
	return errors.As(err, &de)
}

func itoa(i int) string { return strconv.Itoa(i) }

// sortNotes puts notes in ingest's order: (StartTick, Track, Channel, Pitch).
func sortNotes(ns []ingest.Note) {
	slices.SortStableFunc(ns, func(a, b ingest.Note) int {
		return cmp.Or(cmp.Compare(a.StartTick, b.StartTick), cmp.Compare(a.Track, b.Track),
			cmp.Compare(a.Channel, b.Channel), cmp.Compare(a.Pitch, b.Pitch))
	})
}

func refGlob() ([]string, error) { return filepath.Glob(filepath.Join(refDir, "*.mid")) }

// splitFields splits "label@time" words and keeps the labels.
func splitFields(s string) []string {
	var out []string
	for _, f := range strings.Fields(s) {
		l, _, _ := strings.Cut(f, "@")
		out = append(out, l)
	}
	return out
}

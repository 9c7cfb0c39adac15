package ingest

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"sort"
	"testing"
)

// TestParseHashedMatchesHashPiece checks that hashing while parsing gives what
// Parse followed by hashPiece gives: the same pieces, hashes, stats and errors, with
// the pedal on and off, on the fixtures, the openttd-openmsx files, and damaged
// copies of them (truncated, bytes overwritten), so that failures half way through a
// format-2 file are covered too.
func TestParseHashedMatchesHashPiece(t *testing.T) {
	inputs := reuseInputs(t)
	rng := rand.New(rand.NewPCG(5, 6))
	names := make([]string, 0, len(inputs))
	for name := range inputs {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		data := inputs[name]
		for k := range 4 {
			if len(data) < 2 {
				break
			}
			inputs[fmt.Sprintf("%s-cut%d", name, k)] = data[:1+rng.IntN(len(data)-1)]
			d := slices.Clone(data)
			for range 1 + rng.IntN(8) {
				d[rng.IntN(len(d))] = byte(rng.IntN(256))
			}
			inputs[fmt.Sprintf("%s-poke%d", name, k)] = d
		}
	}
	h := newPieceHasher()
	for _, pedal := range []bool{true, false} {
		opts := DefaultParseOptions()
		opts.Pedal = pedal
		for name, data := range inputs {
			want, werr := Parse(name, data, opts)
			wantSt := noStats()
			for i := range want {
				wantSt.add(h.hashPiece(&want[i]))
				want[i].Notes = slices.Clone(want[i].Notes)
			}
			got, gotSt, gerr := parseHashed(name, data, opts, h)
			if fmt.Sprint(werr) != fmt.Sprint(gerr) {
				t.Fatalf("%s (pedal %v): error %v, want %v", name, pedal, gerr, werr)
			}
			if werr != nil {
				continue
			}
			if gotSt != wantSt {
				t.Errorf("%s (pedal %v): stats %+v, want %+v", name, pedal, gotSt, wantSt)
			}
			if len(got) != len(want) {
				t.Fatalf("%s (pedal %v): %d pieces, want %d", name, pedal, len(got), len(want))
			}
			for i := range got {
				g, w := &got[i], &want[i]
				if g.MusicalHash != w.MusicalHash || g.TransposedHash != w.TransposedHash {
					t.Errorf("%s (pedal %v) piece %d: hashes %s %s, want %s %s", name, pedal, i,
						g.MusicalHash, g.TransposedHash, w.MusicalHash, w.TransposedHash)
				}
				if !slices.Equal(g.Notes, w.Notes) {
					t.Errorf("%s (pedal %v) piece %d: notes differ", name, pedal, i)
				}
			}
			releasePieces(got)
		}
	}
}

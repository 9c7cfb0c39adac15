package ingest

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// TestNameSort checks the bounded-memory sort against the standard library's stable
// sort, with runs of a few names, runs merged into one at the run limit, and all in
// memory.
func TestNameSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	for _, tt := range []struct {
		chunk, n int
	}{{1 << 30, 3000}, {1, 500}, {200, 5000}, {5000, 20000}, {1, 0}} {
		s := newNameSort()
		s.chunk = tt.chunk
		type item struct {
			name string
			tag  byte
		}
		var want []item
		for i := range tt.n {
			// names with shared prefixes, separators that sort before and after
			// letters, repeats, and non-ASCII
			name := fmt.Sprintf("%s/%c%d%s", []string{"a", "a-b", "a/b", "ä", ""}[rng.IntN(5)],
				"-/.zé"[rng.IntN(4)], rng.IntN(tt.n/3+1), strings.Repeat("x", rng.IntN(30)))
			tag := byte(i % 7)
			s.add(name, tag)
			want = append(want, item{name, tag})
		}
		slices.SortStableFunc(want, func(a, b item) int { return strings.Compare(a.name, b.name) })
		var got []item
		if err := s.each(func(name string, tag byte) error {
			got = append(got, item{name, tag})
			return nil
		}); err != nil {
			t.Fatalf("chunk %d: %v", tt.chunk, err)
		}
		if !slices.Equal(got, want) {
			t.Errorf("chunk %d, %d names: order differs from a stable sort", tt.chunk, tt.n)
		}
		if len(s.runs) != 0 {
			t.Errorf("chunk %d: runs left open", tt.chunk)
		}
	}
}

// TestNameSortRunLimit checks that no more than maxSortRuns run files are open.
func TestNameSortRunLimit(t *testing.T) {
	s := newNameSort()
	s.chunk = 1
	most := 0
	for i := range 5 * maxSortRuns {
		s.add(fmt.Sprint(5*maxSortRuns-i), 0)
		most = max(most, len(s.runs))
	}
	if most > maxSortRuns {
		t.Errorf("%d runs open at once, limit %d", most, maxSortRuns)
	}
	n := 0
	s.each(func(string, byte) error { n++; return nil })
	if n != 5*maxSortRuns {
		t.Errorf("%d names back, want %d", n, 5*maxSortRuns)
	}
}

func BenchmarkNameSort(b *testing.B) {
	names := make([]string, 200000)
	for i := range names {
		names[i] = fmt.Sprintf("dataset-%d/folder-%d/%08d-some-piece-name.mid", i%7, i%101, (i*7919)%len(names))
	}
	for _, tt := range []struct {
		name  string
		chunk int
	}{{"memory", 1 << 30}, {"runs", sortChunk}} {
		b.Run(tt.name, func(b *testing.B) {
			for b.Loop() {
				s := newNameSort()
				s.chunk = tt.chunk
				for _, n := range names {
					s.add(n, 0)
				}
				s.each(func(string, byte) error { return nil })
			}
		})
	}
}

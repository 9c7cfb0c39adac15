package ingest

import (
	"crypto/sha256"
	"encoding/binary"
	"math/rand/v2"
	"testing"
)

// testKey is a key as the scan makes them: a SHA-256 prefix.
func testKey(i int) dupKey {
	var b [8]byte
	binary.LittleEndian.PutUint64(b[:], uint64(i))
	sum := sha256.Sum256(b[:])
	return dupKey(sum[:keyLen])
}

// TestKeyTable checks a table against a Go map through random gets and sets, in
// memory, across the spill to the file and across several doublings of the file.
func TestKeyTable(t *testing.T) {
	for _, spillAt := range []int{1 << 30, 7, 100, 4096} {
		tb := newKeyTable()
		tb.spillAt = spillAt
		want := map[dupKey]uint64{}
		rng := rand.New(rand.NewPCG(7, 8))
		for i := range 24000 {
			k := testKey(rng.IntN(16000))
			if rng.IntN(3) == 0 {
				v, ok := tb.get(k)
				if w, wok := want[k]; ok != wok || v != w {
					t.Fatalf("spill at %d, step %d: get %x = %d %v, want %d %v", spillAt, i, k, v, ok, w, wok)
				}
				continue
			}
			v := rng.Uint64N(1 << 62)
			tb.set(k, v)
			want[k] = v
		}
		if tb.err != nil {
			t.Fatalf("spill at %d: %v", spillAt, tb.err)
		}
		for k, w := range want {
			if v, ok := tb.get(k); !ok || v != w {
				t.Fatalf("spill at %d: get %x = %d %v at the end, want %d", spillAt, k, v, ok, w)
			}
		}
		// keys never set are not found (whatever the filters admit)
		for i := 16000; i < 26000; i++ {
			if v, ok := tb.get(testKey(i)); ok {
				t.Fatalf("spill at %d: key %d never set found with %d", spillAt, i, v)
			}
		}
		if onDisk := len(tb.runs) > 0; onDisk != (spillAt < len(want)) {
			t.Errorf("spill at %d: %d runs with %d entries", spillAt, len(tb.runs), len(want))
		}
		for i := 1; i < len(tb.runs); i++ {
			if tb.runs[i].level >= tb.runs[i-1].level {
				t.Errorf("spill at %d: run levels %d then %d", spillAt, tb.runs[i-1].level, tb.runs[i].level)
			}
		}
		if len(tb.mem) > spillAt {
			t.Errorf("spill at %d: %d entries in memory", spillAt, len(tb.mem))
		}
		tb.close()
	}
}

// TestKeyTableIOError checks that a failing file is reported, never a panic or a
// wrong answer taken for a right one.
func TestKeyTableIOError(t *testing.T) {
	tb := newKeyTable()
	tb.spillAt = 10
	for i := range 20 {
		tb.set(testKey(i), uint64(i))
	}
	if len(tb.runs) == 0 {
		t.Skip("no temporary file on this system")
	}
	for _, r := range tb.runs {
		r.f.Close()
	}
	if _, ok := tb.get(testKey(3)); ok || tb.err == nil {
		t.Errorf("after the file failed: found %v, err %v", ok, tb.err)
	}
}

func BenchmarkKeyTable(b *testing.B) {
	for _, tt := range []struct {
		name    string
		spillAt int
	}{{"memory", 1 << 30}, {"runs", spillKeys}} {
		b.Run(tt.name, func(b *testing.B) {
			tb := newKeyTable()
			tb.spillAt = tt.spillAt
			defer tb.close()
			i := 0
			for b.Loop() {
				// a new file's pattern: a miss, then a set
				k := testKey(i)
				if _, ok := tb.get(k); !ok {
					tb.set(k, uint64(i))
				}
				i++
			}
		})
	}
}

// TestScanIndexesOnDisk runs the source, duplicate and repeated-name tests of the
// scan with every index, the names and the sorted file lists on disk from the first
// entry.
func TestScanIndexesOnDisk(t *testing.T) {
	defer func(k, n, c int) { tableSpillAt, namesSpillAt, sortChunkAt = k, n, c }(tableSpillAt, namesSpillAt, sortChunkAt)
	tableSpillAt, namesSpillAt, sortChunkAt = 0, 0, 1
	for _, tt := range []struct {
		name string
		test func(*testing.T)
	}{
		{"duplicates", TestScanDuplicates}, {"across sources", TestScanDuplicatesAcrossSources},
		{"format 2", TestScanFormat2Duplicates}, {"repeated entry names", TestRepeatedEntryNames},
		{"repeated paths", TestRepeatedPathAcrossSources}, {"deterministic", TestScanDeterministic},
		{"mixed folder", TestScanMixedFolder}, {"symlink loop", TestFolderSymlinkLoop},
		{"folder order", TestFolderOrder},
		{"list", TestListSource}, {"list repeated path", TestListSourceRepeatedPath},
		{"hostile corpus", TestHostileCorpusScan}, {"tar sorted", TestTarSortedMultiPass},
	} {
		t.Run(tt.name, tt.test)
	}
}

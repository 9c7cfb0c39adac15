package export

import (
	"context"
	"fmt"
	"runtime"
	"runtime/debug"
	"sync"
	"sync/atomic"
	"testing"
	"time"
)

// TestMemoryBoundedByShards streams corpora of 35 and 140 MiB of rows through
// the shard writer with 1 MiB shards and checks that the heap in use does not grow
// with the corpus: its peak is about the same for both sizes, and far below the
// larger corpus.
func TestMemoryBoundedByShards(t *testing.T) {
	if testing.Short() {
		t.Skip("writes 175 MiB of rows; skipped with -short")
	}
	// Little collector slack, so the heap in use follows the live data.
	defer debug.SetGCPercent(debug.SetGCPercent(20))
	small, smallPayload := peakHeap(t, 150)
	large, largePayload := peakHeap(t, 600)
	t.Logf("peak heap growth %d MiB for %d MiB of rows, %d MiB for %d MiB", small>>20, smallPayload>>20, large>>20, largePayload>>20)
	if large > 2*small+4<<20 {
		t.Errorf("peak heap grew from %d to %d MiB with a 4× larger corpus: memory follows the corpus size", small>>20, large>>20)
	}
	if large > largePayload/4 {
		t.Errorf("peak heap %d MiB for a %d MiB corpus", large>>20, largePayload>>20)
	}
}

// peakHeap writes files synthetic files of 20 windows of 1024 tokens with 1 MiB
// shards on 2 workers, and returns the peak growth of the heap in use and the
// payload written.
func peakHeap(t *testing.T, files int) (peak, payload int64) {
	const rowsPerFile, tokens = 20, 1024
	sp := synthSpec(t.TempDir(), 2)
	sp.cfg.Shards.Rows = 0
	sp.cfg.Shards.MB = 1
	sp.cfg.Shards.RowGroupMB = 0.25
	sp.cfg.Tokens.MaxLen = tokens
	sp.maxLen = tokens
	feed := func(emit func(fileResult) error) error {
		for f := range files {
			fr := fileResult{entry: FileEntry{Dataset: "mem", Source: fmt.Sprintf("f%04d.mid", f), Status: "ok", Pieces: 1, Windows: rowsPerFile}}
			hash := fmt.Sprintf("%016x", f)
			split := SplitOf(hash, sp.cfg.Shards.Splits)
			for w := range rowsPerFile {
				r := Row{Piece: fr.entry.Source + "#0", Dataset: "mem", Source: fr.entry.Source, ContentHash: hash, Split: split, Window: int32(w), Stretch: 1,
					Tokens: make([]int32, tokens), Time: make([]int32, tokens), Pitch: make([]int16, tokens), Inst: make([]int16, tokens)}
				for i := range tokens {
					r.Tokens[i], r.Time[i], r.Pitch[i] = int32((i*7+f)%300), int32(i*10), int16(40+i%40)
				}
				fr.rows = append(fr.rows, r)
			}
			if err := emit(fr); err != nil {
				return err
			}
		}
		return nil
	}
	runtime.GC()
	var base runtime.MemStats
	runtime.ReadMemStats(&base)
	var max atomic.Uint64
	stop := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		var ms runtime.MemStats
		for {
			select {
			case <-stop:
				return
			case <-time.After(5 * time.Millisecond):
			}
			runtime.ReadMemStats(&ms)
			if ms.HeapInuse > max.Load() {
				max.Store(ms.HeapInuse)
			}
		}
	}()
	m, err := writeOutput(context.Background(), sp, feed, noCoverage)
	close(stop)
	wg.Wait()
	if err != nil {
		t.Fatal(err)
	}
	for _, sh := range m.Shards {
		payload += sh.Tokens * 12
	}
	return int64(max.Load()) - int64(base.HeapInuse), payload
}

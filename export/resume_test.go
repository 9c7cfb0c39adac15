package export

import (
	"context"
	"errors"
	"slices"
	"sync/atomic"
	"testing"
	"time"
)

// resumeSpec is synthSpec with shards of several batches (writeBatch rows each),
// so that a rerun can part from the interrupted run inside a shard.
func resumeSpec(dir string) outputSpec {
	sp := synthSpec(dir, 2)
	sp.cfg.Shards.Rows = 100
	return sp
}

// interrupted runs the output stage on files and stops it once the first train
// shard is written, as a kill would (shards and journal left, no manifest): the
// feed stops after the rows that fill that shard and waits for it.
func interrupted(t *testing.T, dir string, files []fileResult) {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	sp := resumeSpec(dir)
	first := make(chan struct{})
	sp.onShard = func(sh Shard) {
		if sh.Path == shardName(SplitTrain, Part{}, 0) {
			close(first)
		}
	}
	feed := func(emit func(fileResult) error) error {
		train := int64(0)
		for _, f := range files {
			if err := emit(f); err != nil {
				return err
			}
			for _, r := range f.rows {
				if r.Split == SplitTrain {
					train++
				}
			}
			if train >= sp.cfg.Shards.Rows {
				break
			}
		}
		select {
		case <-first:
		case <-time.After(time.Minute):
			t.Error("the first train shard was not written")
		}
		cancel()
		return ctx.Err()
	}
	if _, err := writeOutput(ctx, sp, feed, noCoverage); !errors.Is(err, context.Canceled) {
		t.Fatalf("interrupted run: err %v, want context.Canceled", err)
	}
}

// TestResumeComparesBatches: a rerun keeps the shards of the interrupted run
// whose batches it would encode alike, without encoding them; where its batches
// part from the interrupted run's (the input changed in between), it encodes the
// shard again, reading the batches before back from the file. Shards written by
// another build or with other writer options are encoded again. Either way the
// result is byte for byte that of an uninterrupted run of the rerun.
func TestResumeComparesBatches(t *testing.T) {
	files := synthFiles(120)
	changed := slices.Clone(files)
	// A train row in the second batch of the first train shard gets other tokens.
	trainRows, at := 0, -1
	for i, f := range files {
		for _, r := range f.rows {
			if r.Split == SplitTrain {
				trainRows++
			}
		}
		if trainRows > writeBatch+5 && at < 0 {
			at = i
		}
	}
	if trainRows < 150 || at < 0 {
		t.Fatalf("%d train rows: the test needs more than one train shard", trainRows)
	}
	fr := changed[at]
	fr.rows = slices.Clone(fr.rows)
	for i := range fr.rows {
		if fr.rows[i].Split == SplitTrain {
			fr.rows[i].Tokens = slices.Clone(fr.rows[i].Tokens)
			fr.rows[i].Tokens[0] = (fr.rows[i].Tokens[0] + 1) % 300
			break
		}
	}
	changed[at] = fr

	for _, tc := range []struct {
		name  string
		rerun []fileResult
		tool  string // tool version of the rerun
	}{{"same input", files, "test"}, {"input changed", changed, "test"}, {"other build", files, "test 2"}} {
		t.Run(tc.name, func(t *testing.T) {
			clean := t.TempDir()
			csp := resumeSpec(clean)
			csp.toolVersion = tc.tool
			if _, err := writeOutput(context.Background(), csp, feedOf(tc.rerun), noCoverage); err != nil {
				t.Fatal(err)
			}
			dir := t.TempDir()
			interrupted(t, dir, files)
			var reused, encoders, shards, replayed atomic.Int64
			kept := map[string]bool{} // written under the writer's lock, read after the run
			last := false
			sp := resumeSpec(dir)
			sp.toolVersion = tc.tool
			sp.onReuse = func() { reused.Add(1); last = true }
			sp.onEncode = func(n int) { encoders.Add(1); replayed.Add(int64(n)) }
			sp.onShard = func(sh Shard) {
				shards.Add(1)
				kept[sh.Path], last = last, false
			}
			if _, err := writeOutput(context.Background(), sp, feedOf(tc.rerun), noCoverage); err != nil {
				t.Fatal(err)
			}
			if d := diffTrees(treeHashes(t, clean), treeHashes(t, dir)); len(d) > 0 {
				t.Errorf("resumed output differs from an uninterrupted run: %v", d)
			}
			if encoders.Load()+reused.Load() != shards.Load() {
				t.Errorf("%d shards: %d encoded and %d kept", shards.Load(), encoders.Load(), reused.Load())
			}
			first := shardName(SplitTrain, Part{}, 0)
			switch tc.name {
			case "same input":
				if !kept[first] || replayed.Load() != 0 {
					t.Errorf("%s kept %v, %d batches read back; want kept, none read back", first, kept[first], replayed.Load())
				}
			case "input changed":
				if kept[first] || replayed.Load() != 1 {
					t.Errorf("%s kept %v, %d batches read back; want encoded again from its first batch", first, kept[first], replayed.Load())
				}
			case "other build":
				if reused.Load() != 0 || replayed.Load() != 0 {
					t.Errorf("%d shards kept, %d batches read back from shards written by another build; want none", reused.Load(), replayed.Load())
				}
			}
			t.Logf("%d shards: %d kept without encoding, %d encoded, %d batches read back", shards.Load(), reused.Load(), encoders.Load(), replayed.Load())
		})
	}
}

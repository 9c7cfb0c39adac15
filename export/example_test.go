package export_test

import (
	"fmt"
	"os"
	"path/filepath"

	"github.com/parquet-go/parquet-go"

	"github.com/relshard/relshard/export"
)

// A shard is an ordinary Parquet file with one row per training window.
func ExampleWriteShard() {
	dir, _ := os.MkdirTemp("", "shard")
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "train-000000.parquet")
	rows := []export.Row{{
		Tokens: []int32{5, 17, 301}, Time: []int32{0, 0, 120}, Pitch: []int16{-1, 60, -1}, Inst: []int16{-1, 0, -1},
		Piece: "demo/a.mid#0", Dataset: "demo", Source: "a.mid", ContentHash: "3f2a", Split: export.SplitTrain, Stretch: 1,
	}}
	sh, err := export.WriteShard(path, rows, export.ShardOptions{Metadata: map[string]string{export.MetaTimeUnit: "ms"}})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(sh.Rows, "row,", sh.Tokens, "tokens")

	got, _ := parquet.ReadFile[export.Row](path)
	fmt.Println(got[0].Tokens, got[0].Pitch, got[0].Split)
	// Output:
	// 1 row, 3 tokens
	// [5 17 301] [-1 60 -1] train
}

// Splits depend on nothing but the content hash, so a piece keeps its split as the
// corpus grows, and every duplicate and augmentation of it lands in the same one.
func ExampleSplitOf() {
	r := export.DefaultRatios
	counts := map[string]int{}
	for i := range 10000 {
		counts[export.SplitOf(fmt.Sprintf("%x", i), r)]++
	}
	fmt.Println(export.SplitOf("9c1e4b", r) == export.SplitOf("9c1e4b", r))
	fmt.Println(counts[export.SplitTrain] > 8800, counts[export.SplitValidation] > 400, counts[export.SplitTest] > 400)
	// Output:
	// true
	// true true true
}

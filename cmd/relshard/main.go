// Command relshard turns MIDI corpora into deduplicated, tokenized Parquet training
// shards for relative-attention models, and reports how relative-position buckets
// cover the offsets in the data.
package main

import (
	"fmt"
	"os"

	"github.com/relshard/relshard/export/bench"
)

func main() {
	code := run(os.Args[1:], defaultStreams())
	// The memory measure of relshard bench runs exports as child processes and asks
	// each for its own peak resident memory through this variable.
	if path := os.Getenv(bench.PeakRSSEnv); path != "" {
		if err := bench.WritePeakRSS(path); err != nil {
			fmt.Fprintln(os.Stderr, "relshard:", err)
		}
	}
	os.Exit(code)
}

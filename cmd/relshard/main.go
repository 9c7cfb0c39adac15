// Command relshard turns MIDI corpora into deduplicated, tokenized Parquet training
// shards for relative-attention models, and reports how relative-position buckets
// cover the offsets in the data.
package main

import "os"

func main() { os.Exit(run(os.Args[1:], defaultStreams())) }

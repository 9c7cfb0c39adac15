// Package export writes tokenized training windows as Parquet shards with a manifest.
package export

// Package mutate makes hostile Standard MIDI Files by damaging valid ones, for tests
// of readers that must survive anything a corpus from the internet holds.
//
// From each valid file it derives, deterministically from a seed, a set of malformed
// variants: the file cut at every chunk boundary and inside events, single and
// multiple bit flips, chunk lengths changed by one, set to zero or past the end,
// huge declared lengths (chunk lengths of 0xFFFFFFFF, meta and SysEx lengths of the
// largest four-byte variable-length quantity), invalid five-byte and unterminated
// variable-length quantities, and running-status misuse (a track's first status
// removed, every status of a track removed, running status after a meta event).
//
//	cases := mutate.Corpus(7, []mutate.Base{{Name: "tune", Data: smf}})
//	// cases[0] == Case{Name: "tune-truncate-chunk-000", Op: OpTruncateChunk, Detail: "cut at byte 14 (start of chunk 1)", ...}
//
// The package does not depend on the reader it tests: it walks chunks and events
// with a small lenient walker of its own (SMF 1.0 layout), which it only ever runs
// on the valid bases.
package mutate

// Package ingest turns Standard MIDI Files into clean, fully accounted note data.
//
// It reads sources (folders, zip and tar archives, gzip-compressed files, path lists),
// parses each file with an allocation-free SMF reader that checks every length against
// the bytes that remain, pairs note-on and note-off events into notes with times in
// ticks and seconds (through the tempo map), finds exact, musical and transposed
// duplicates, and reports every input file exactly once with its status.
//
//	pieces, err := ingest.Parse("song.mid", data, ingest.DefaultParseOptions())
//	// pieces[0].Notes[0] == Note{Pitch: 48, Velocity: 96, StartTick: 0, EndTick: 384, Start: 0, End: 2, ...}
//
// The low-level Reader walks the events of a file without allocating, for callers
// that need events rather than notes.
package ingest

// Package sampledata generates realistic Standard MIDI File corpora of any size, and
// holds the demo corpus and the damaged set.
//
// The music is procedural but real: keys and scales, chord progressions with
// cadences, melodies that move mostly by step over them, bass lines, drum grooves
// on channel 10, phrases of 4 and 8 bars in forms such as AABA. It is set in an
// invented scenario, with invented titles, in three datasets (sub-folders):
//
//   - velmora-recitals: the Velmora Conservatory's recital archive, solo piano
//     performances captured from a MIDI grand: unquantized onsets with a human
//     timing spread, velocity dynamics, sustain pedal (CC 64) and rubato written
//     as a tempo event on every beat; some written with SMPTE division.
//   - tollemere-band: the Tollemere Town Band's arrangement library, quantized
//     band arrangements (marches in 2/4 and 6/8, waltzes, ballads, pop) with
//     several General MIDI programs and drums, and format-0 lead sheets.
//   - kestrel-lane: Kestrel Lane Studio's sketchbook, swing (swung eighths, 12/8
//     shuffles, triplets, walking bass), odd and changing meters (7/8, 5/4, 5/8,
//     9/8, a meter change for the middle section) with tempo changes, and format-2
//     pattern banks whose tracks are independent drum-and-bass patterns.
//
// Near-duplicates are made on purpose, directly after their original: the same
// piece transposed (Kind "transposed") and the same piece saved at another PPQ
// ("resaved"). A separate damaged set (folder tollemere-salvage, see
// DamagedCases) holds broken files, each documented with the error package ingest
// must give for it.
//
// A seed gives byte-identical files on every machine and for any number of
// workers: each file has its own PCG stream derived from (seed, index), no choice
// depends on map order, and all timing is integer arithmetic.
//
//	err := sampledata.Generate(ctx, sampledata.Config{Files: 1000, Seed: 7}, func(f sampledata.File) error {
//		// f.Path == "velmora-recitals/00000-...-nocturne.mid", f.Kind == "performance"
//		return os.WriteFile(filepath.Join(dir, f.Path), f.Data, 0o644)
//	})
//
// # Statistics
//
// The generator promises these proportions of a corpus's good files (the expected
// value, then the range a 500-file sample is tested to fall in):
//
//   - files with drum notes on channel 10: 62% (52–72%); every drum note is a
//     General MIDI 1 percussion key (35–81);
//   - performance-timed files (onsets off any beat grid; kinds performance,
//     timecode-performance and their transpositions): 34% (26–42%); every other
//     file's onsets lie on a grid of 1/12 beat;
//   - format 0: 21% (14–28%); format 2: 3%; SMPTE division: 3%; the rest format 1;
//   - PPQ of the metrical files: 96 for 17% (10–24%), 384, 480 and 960 for 28%
//     each (20–36%), no others;
//   - every Set Tempo within 40–240 BPM; the median initial tempo within 90–130 BPM;
//   - sustain pedal in 85% (75–95%) of performances, velocities spanning at least
//     20 steps in each; a human onset spread of 6 to 22 ms standard deviation per
//     performance, bell-shaped, never beyond three deviations, with the melody a
//     further 0–12 ms ahead;
//   - every band arrangement (kind ensemble) uses at least three General MIDI
//     programs (melody, chords and bass come from disjoint sets);
//   - at least 55% of successive melody intervals of 2 semitones or less;
//   - at least 95% of pitched notes in the scale of the file's Key Signature (the
//     raised seventh of harmonic minor counted in; the rest are chromatic
//     approach notes of walking bass lines);
//   - transposed near-duplicates 5.6% (3–9%), resaved ones 2.8% (1–5%);
//   - all of 2/4, 3/4, 4/4, 5/4, 6/8, 7/8 and 12/8 present, and meter changes.
//
// The first nine files of every corpus are one of each kind, a transposed and a
// resaved duplicate and an odd-meter piece that changes meter, so even a small
// corpus has a format-0, a format-2 and an SMPTE file.
//
// gomidi's reader (v2.3.23) cannot read the SMPTE files: it assumes a metrical
// division when it builds its tempo map and panics; the tests read them with
// midicsv and package ingest instead.
//
// Generation is fast enough for scale tests: composing and encoding cost about
// 0.8 ms of CPU per file (10,000 files took 8.3 s of CPU with two workers), so
// 10,000 files, written to disk, take well under a minute on two cores (see
// BenchmarkGenerate).
package sampledata

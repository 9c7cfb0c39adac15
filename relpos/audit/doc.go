// Package audit measures how each dataset of a MIDI corpus times and pitches its
// notes, before datasets are mixed for training a relative-attention model.
//
// For every dataset it builds distributions of inter-onset intervals, of the time
// and pitch offsets (Δt, Δp) between the token pairs that attention sees inside each
// training window, of note durations, velocities, polyphony and tempo. For every
// file it detects the beat grid the onsets sit on ("on a 1/16 grid", "triplet grid
// (1/8 triplets)", "unquantized performance"), and checks PPQ, the tempo map, the
// meter and the drum share. It compares datasets with the Jensen–Shannon divergence
// and the 1-D Wasserstein distance of their Δt and Δp distributions, and lists files
// whose own distributions are far from their dataset's, each with its reason.
//
// A Report renders as aligned text tables, JSON, SVG and PNG charts with the bucket
// edges and clip of the configured relative-position schemes drawn on them, and as
// one self-contained HTML page:
//
//	rep, err := audit.Run(ctx, sources, audit.DefaultConfig())
//	if err != nil { ... }
//	err = rep.WriteHTML(f) // charts inline as SVG, no network access
//
// Run scans sources with ingest.Scan; an Auditor takes pieces one at a time
// (AddRecord, AddPiece, Merge, Report) for callers that already hold them. A config
// for the same windows as an export comes from the export config's sections:
//
//	cfg := audit.DefaultConfig()
//	cfg.Tokenize, cfg.Relpos, cfg.Scan = ecfg.Tokens, ecfg.Buckets, ecfg.Input.Options()
//
// Memory is bounded per dataset and per worker (histograms exact to 4 s, then 64
// counters per octave up to an hour: a few tens of KB each) and grows with the number
// of files by about a kilobyte each, the per-file facts the report lists. All counts
// are integers merged in any order, so a report is byte-identical for any worker
// count.
package audit

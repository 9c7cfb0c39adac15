// Package tokenize turns ingested pieces into timed token streams for
// relative-attention models, decodes streams back into notes and Standard MIDI
// Files, and cuts streams into fixed-length training windows.
//
// Two encodings are offered. The performance encoding is the event representation
// of Oore et al. 2018 (used by Huang et al. 2018): note-on and note-off for each of
// the 128 keys, time-shifts in steps of shift_ms up to max_shift_ms, and
// set-velocity in velocity_bins bins. The beat-grid encoding follows the bar and
// position idea of Huang & Yang 2020: a bar token, a position in the bar at
// grid_per_quarter steps per quarter note, and per note an optional instrument
// (General MIDI program family or drums), pitch, duration and velocity; meter and
// binned tempo are restated at bar starts when they change.
//
// Every Token carries its time. In the performance encoding Time and MS are both
// milliseconds from the piece start; in the beat-grid encoding Time is in grid steps
// and MS in milliseconds through the piece's tempo map. Which time each kind of token
// carries:
//
//	begin                        0
//	time-shift (performance)     the time after the shift
//	note-on, note-off, hit,      the current time (after all earlier shifts)
//	set-velocity, end
//	bar, meter, tempo (grid)     the bar's first step
//	position (grid)              the step of that position
//	inst, pitch, duration,       the onset step of the note they belong to
//	velocity (grid)
//
// so times never decrease along a stream. Pitch is 0-127 on note-on, note-off, hit
// and pitch tokens and -1 elsewhere. Inst is the instrument of the note a token
// belongs to and -1 for tokens that belong to no note: in the performance encoding
// the note's General MIDI program (informative only: the ids do not keep it), in the
// grid the first program of its family (what the inst token keeps); InstDrums for
// drums in both.
//
// A performance stream for a middle C held half a second, then an E for a quarter
// second (velocity 96, bin 24), with each token's time:
//
//	begin@0 vel.24@0 on.60@0 dt.500@500 off.60@500 on.64@500 dt.250@750 off.64@750 end@750
//
// and the same notes on the default grid (12 steps per quarter, 120 BPM):
//
//	begin@0 bar@0 meter.4/4@0 tempo.19@0 pos.0@0 inst.piano@0 pitch.60@0 dur.12@0 vel.24@0
//	pos.12@12 pitch.64@12 dur.6@12 vel.24@12 end@12
//
// Quantization: performance times are rounded to the nearest shift step, so onsets
// and releases move by at most shift_ms/2; a key sounds once at a time (a second
// note-on of a sounding key ends the first; two notes of one key at one step merge
// into the longest), and the encoder counts both in Stats. Grid times are rounded to
// the nearest step; notes already on the grid come back with onset, duration and key
// exact. Velocities come back inside their bin. Encoder.Fidelity measures all this
// for one piece.
//
// Windows cut a stream into training windows of at most max_len tokens that each
// decode on their own; see Encoder.Windows. Augmentation variants (transposition,
// tempo stretch) are listed by Encoder.Variants, the identity first, and Windows
// walks them all, so every consumer sees the same windows in the same order.
//
// Decode turns ids back into notes and WriteSMF writes them as a Standard MIDI File.
package tokenize

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
// belongs to (a General MIDI program, InstDrums for drums) and -1 for tokens that
// belong to no note.
//
// A performance stream for a middle C held half a second, then an E:
//
//	begin  vel.24  on.60  dt.500  off.60  on.64  dt.250  off.64  end
//	time:  0       0      0       500     500    500     750     750    750
package tokenize

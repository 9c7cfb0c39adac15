package tokenize

import (
	"cmp"
	"errors"
	"fmt"
	"io"
	"math/bits"
	"slices"

	"github.com/relshard/relshard/ingest"
	"gitlab.com/gomidi/midi/v2"
	"gitlab.com/gomidi/midi/v2/smf"
)

// ErrNotWritable reports a piece that cannot be written as a metric SMF.
var ErrNotWritable = errors.New("piece not writable as SMF")

// SMF limits (SMF 1.0: the division is 15 bits for metric time; delta-times are
// variable-length quantities of at most four bytes, so at most 0x0FFFFFFF).
const (
	maxDivision = 0x7FFF
	maxDelta    = 0x0FFFFFFF
)

// Event classes at one tick, in file order: note-offs of notes that began earlier,
// then note-ons, then note-offs of zero-length notes, so every note-off follows its
// note-on.
const (
	classOff     = 0
	classOn      = 1
	classZeroOff = 2
)

type smfEvent struct {
	tick  int64
	class uint8 // classOff, classOn or classZeroOff
	ch    uint8
	key   uint8
	vel   uint8
	prog  uint8
}

// WriteSMF writes p as a format-1 Standard MIDI File: a conductor track with the
// tempo and meter map, then one track per channel used, in channel order, with a
// program change before the first note and wherever the program changes. Drums go
// on channel 10 (index 9) as General MIDI 1 has it. At one tick, note-offs of earlier
// notes come first, then note-ons, then note-offs of zero-length notes.
func WriteSMF(w io.Writer, p *ingest.Piece) error {
	if p.TicksPerQuarter < 1 || p.TicksPerQuarter > maxDivision {
		return fmt.Errorf("write smf: %w: ticks per quarter %d (want 1..%d)", ErrNotWritable, p.TicksPerQuarter, maxDivision)
	}
	s := smf.NewSMF1()
	s.TimeFormat = smf.MetricTicks(p.TicksPerQuarter)

	type metaEv struct {
		tick int64
		msg  smf.Message
	}
	var metas []metaEv
	for _, m := range p.Meters {
		pow := bits.TrailingZeros8(m.Denom)
		if m.Num == 0 || m.Denom == 0 || m.Denom != 1<<pow {
			return fmt.Errorf("write smf: %w: meter %d/%d at tick %d", ErrNotWritable, m.Num, m.Denom, m.Tick)
		}
		// Time Signature: FF 58 04 nn dd cc bb (SMF 1.0), dd a power of two, 24 MIDI
		// clocks per metronome click and 8 thirty-seconds per quarter (common practice).
		metas = append(metas, metaEv{m.Tick, smf.Message{0xFF, 0x58, 0x04, m.Num, byte(pow), 24, 8}})
	}
	for _, t := range p.Tempos {
		us := t.USPerQuarter
		if us == 0 || us > 0xFFFFFF {
			return fmt.Errorf("write smf: %w: tempo %d µs per quarter at tick %d", ErrNotWritable, us, t.Tick)
		}
		// Set Tempo: FF 51 03 tttttt (SMF 1.0), written raw to keep µs exact.
		metas = append(metas, metaEv{t.Tick, smf.Message{0xFF, 0x51, 0x03, byte(us >> 16), byte(us >> 8), byte(us)}})
	}
	slices.SortStableFunc(metas, func(a, b metaEv) int { return cmp.Compare(a.tick, b.tick) })
	var conductor smf.Track
	var last int64
	for _, m := range metas {
		d, err := delta(m.tick, last)
		if err != nil {
			return err
		}
		conductor.Add(d, m.msg)
		last = m.tick
	}
	conductor.Close(0)
	if err := s.Add(conductor); err != nil {
		return fmt.Errorf("write smf: %w", err)
	}

	var byChan [16][]smfEvent
	for i, n := range p.Notes {
		if n.Channel > 15 || n.Pitch > 127 || n.Velocity > 127 || n.Program > 127 || n.StartTick < 0 || n.EndTick < n.StartTick {
			return fmt.Errorf("write smf: %w: note %d (channel %d, key %d, velocity %d, ticks %d..%d)",
				ErrNotWritable, i, n.Channel, n.Pitch, n.Velocity, n.StartTick, n.EndTick)
		}
		vel := max(n.Velocity, 1) // velocity 0 would be a note-off
		off := uint8(classOff)
		if n.EndTick == n.StartTick {
			off = classZeroOff
		}
		byChan[n.Channel] = append(byChan[n.Channel],
			smfEvent{tick: n.StartTick, class: classOn, ch: n.Channel, key: n.Pitch, vel: vel, prog: n.Program},
			smfEvent{tick: n.EndTick, class: off, ch: n.Channel, key: n.Pitch})
	}
	for ch, evs := range byChan {
		if len(evs) == 0 {
			continue
		}
		slices.SortStableFunc(evs, func(a, b smfEvent) int {
			return cmp.Or(cmp.Compare(a.tick, b.tick), cmp.Compare(a.class, b.class), cmp.Compare(a.key, b.key))
		})
		var tr smf.Track
		last = 0
		prog := -1
		for _, e := range evs {
			d, err := delta(e.tick, last)
			if err != nil {
				return err
			}
			last = e.tick
			if e.class == classOn {
				if ch != drumChannel && int(e.prog) != prog {
					tr.Add(d, midi.ProgramChange(e.ch, e.prog))
					d = 0
					prog = int(e.prog)
				}
				tr.Add(d, midi.NoteOn(e.ch, e.key, e.vel))
			} else {
				tr.Add(d, midi.NoteOff(e.ch, e.key))
			}
		}
		tr.Close(0)
		if err := s.Add(tr); err != nil {
			return fmt.Errorf("write smf: %w", err)
		}
	}
	if _, err := s.WriteTo(w); err != nil {
		return fmt.Errorf("write smf: %w", err)
	}
	return nil
}

func delta(tick, last int64) (uint32, error) {
	d := tick - last
	if d < 0 || d > maxDelta {
		return 0, fmt.Errorf("write smf: %w: delta-time %d at tick %d", ErrNotWritable, d, tick)
	}
	return uint32(d), nil
}

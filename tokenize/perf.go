package tokenize

import (
	"cmp"
	"fmt"
	"math"
	"slices"

	"github.com/relshard/relshard/ingest"
)

// pnote is one note quantized to shift steps.
type pnote struct {
	on, off int64 // steps
	pitch   uint8
	vel     uint8 // bin
	drum    bool
	inst    int16
}

// Event classes at one instant, in stream order: note-offs of notes that began
// earlier, then note-ons and hits, then note-offs of notes that began at this very
// step (zero length after quantization), so every note-off follows its note-on.
const (
	classOff     = 0
	classOn      = 1
	classZeroOff = 2
)

type pevent struct {
	step  int64
	class uint8
	pitch uint8
	drum  bool
	vel   uint8
	inst  int16
}

func (e *Encoder) encodePerformance(p *ingest.Piece, v Variant, dst []Token) ([]Token, Stats, error) {
	var st Stats
	st.Notes = len(p.Notes)
	shift := float64(e.cfg.ShiftMS)
	voc := e.vocab
	notes := e.pnotes[:0]
	for i := range p.Notes {
		n := &p.Notes[i]
		if n.Drum && e.cfg.Drums == DrumsDrop {
			st.DrumsDropped++
			continue
		}
		pitch := int(n.Pitch)
		if !n.Drum {
			pitch += v.Transpose
		}
		if pitch < 0 || pitch > 127 {
			st.OutOfRange++
			continue
		}
		onMS := n.Start * 1000 * v.Stretch
		offMS := n.End * 1000 * v.Stretch
		if !(onMS >= 0) || !(offMS >= onMS) || offMS > maxMS {
			if offMS > maxMS {
				return dst, st, fmt.Errorf("encode: %w: note %d ends at %.0f s", ErrTooLong, i, n.End)
			}
			return dst, st, fmt.Errorf("encode: %w: note %d has times %v..%v s", ErrBadPiece, i, n.Start, n.End)
		}
		pn := pnote{on: int64(math.Round(onMS / shift)), off: int64(math.Round(offMS / shift)),
			pitch: uint8(pitch), vel: uint8(voc.velBin(n.Velocity)), drum: n.Drum, inst: int16(n.Program)}
		if n.Drum {
			pn.off = pn.on
			pn.inst = InstDrums
		}
		notes = append(notes, pn)
	}
	// Per key: one note at a time. Same onset: keep the longest; overlap: retrigger.
	slices.SortFunc(notes, func(a, b pnote) int {
		if a.drum != b.drum {
			if a.drum {
				return 1
			}
			return -1
		}
		return cmp.Or(cmp.Compare(a.pitch, b.pitch), cmp.Compare(a.on, b.on), cmp.Compare(b.off, a.off))
	})
	kept := notes[:0]
	for _, n := range notes {
		if len(kept) > 0 {
			last := &kept[len(kept)-1]
			if last.drum == n.drum && last.pitch == n.pitch {
				if last.on == n.on {
					st.Merged++
					continue
				}
				if !n.drum && n.on < last.off {
					last.off = n.on
					st.Retriggered++
				}
			}
		}
		kept = append(kept, n)
	}
	e.pnotes = notes
	st.Encoded = len(kept)

	events := e.events[:0]
	for _, n := range kept {
		events = append(events, pevent{step: n.on, class: classOn, pitch: n.pitch, drum: n.drum, vel: n.vel, inst: n.inst})
		if !n.drum {
			c := uint8(classOff)
			if n.off == n.on {
				c = classZeroOff
			}
			events = append(events, pevent{step: n.off, class: c, pitch: n.pitch, inst: n.inst})
		}
	}
	slices.SortFunc(events, func(a, b pevent) int {
		if c := cmp.Or(cmp.Compare(a.step, b.step), cmp.Compare(a.class, b.class), cmp.Compare(a.pitch, b.pitch)); c != 0 {
			return c
		}
		if a.drum == b.drum {
			return 0
		}
		if a.drum {
			return 1
		}
		return -1
	})
	e.events = events

	start := len(dst)
	dst = append(dst, Token{ID: BeginID, Pitch: -1, Inst: -1})
	var cur int64
	curVel := -1
	maxSteps := int64(voc.shiftSteps)
	for _, ev := range events {
		if gap := ev.step - cur; gap > 0 {
			if (len(dst)-start)+int(gap/maxSteps) > MaxStreamTokens {
				return dst, st, fmt.Errorf("encode: %w: over %d tokens", ErrTooLong, MaxStreamTokens)
			}
			for gap > 0 {
				n := min(gap, maxSteps)
				cur += n
				gap -= n
				ms := int32(cur * int64(e.cfg.ShiftMS))
				dst = append(dst, Token{ID: voc.shiftBase + int32(n) - 1, Time: ms, MS: ms, Pitch: -1, Inst: -1})
			}
		}
		ms := int32(cur * int64(e.cfg.ShiftMS))
		if ev.class == classOn {
			if int(ev.vel) != curVel {
				curVel = int(ev.vel)
				dst = append(dst, Token{ID: voc.velBase + int32(ev.vel), Time: ms, MS: ms, Pitch: -1, Inst: -1})
			}
			id := voc.onBase + int32(ev.pitch)
			if ev.drum {
				id = voc.hitBase + int32(ev.pitch)
			}
			dst = append(dst, Token{ID: id, Time: ms, MS: ms, Pitch: int16(ev.pitch), Inst: ev.inst})
		} else {
			dst = append(dst, Token{ID: voc.offBase + int32(ev.pitch), Time: ms, MS: ms, Pitch: int16(ev.pitch), Inst: ev.inst})
		}
		if len(dst)-start > MaxStreamTokens {
			return dst, st, fmt.Errorf("encode: %w: over %d tokens", ErrTooLong, MaxStreamTokens)
		}
	}
	ms := int32(cur * int64(e.cfg.ShiftMS))
	dst = append(dst, Token{ID: EndID, Time: ms, MS: ms, Pitch: -1, Inst: -1})
	st.Tokens = len(dst) - start
	return dst, st, nil
}

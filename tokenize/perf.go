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
	dead    bool // merged into another note of the same key and onset
	inst    int16
}

// pendingOff is a note-off waiting in the encoder's heap, ordered by (step, key).
type pendingOff struct {
	step  int64
	pitch uint8
	inst  int16
}

// smallSort is the group size up to which groups are insertion-sorted.
const smallSort = 24

// Events at one instant come in this order: note-offs of notes that began earlier
// (by key), then note-ons and hits (by key, a note before a hit of the same key),
// each after a set-velocity when the bin changes, then note-offs of notes that began
// at this very step (zero length after quantization), so every note-off follows its
// note-on.
func (e *Encoder) encodePerformance(p *ingest.Piece, v Variant, dst []Token) ([]Token, Stats, error) {
	var st Stats
	st.Notes = len(p.Notes)
	shift := float64(e.cfg.ShiftMS)
	voc := e.vocab
	notes := e.pnotes[:0]
	sorted := true
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
		if len(notes) > 0 && pn.on < notes[len(notes)-1].on {
			sorted = false
		}
		notes = append(notes, pn)
	}
	if !sorted { // ingest sorts notes by onset; hand-made pieces may not be
		slices.SortStableFunc(notes, func(a, b pnote) int { return cmp.Compare(a.on, b.on) })
	}
	e.pnotes = notes

	// One note per key at a time, in onset order: at the same onset keep the longest;
	// a note still sounding when its key starts again ends there (retrigger).
	var last [2][128]int32 // index+1 of the key's latest note
	for i := range notes {
		n := &notes[i]
		d := 0
		if n.drum {
			d = 1
		}
		if j := last[d][n.pitch]; j != 0 {
			l := &notes[j-1]
			if l.on == n.on {
				st.Merged++
				if n.off > l.off {
					l.off, l.vel, l.inst = n.off, n.vel, n.inst
				}
				n.dead = true
				continue
			}
			if !n.drum && n.on < l.off {
				l.off = n.on
				st.Retriggered++
			}
		}
		last[d][n.pitch] = int32(i + 1)
	}
	st.Encoded = len(notes) - st.Merged

	o := perfOut{dst: dst, start: len(dst), maxSteps: int64(voc.shiftSteps), shiftMS: int64(e.cfg.ShiftMS),
		shiftBase: voc.shiftBase, offBase: voc.offBase, heap: e.offs[:0]}
	o.dst = append(o.dst, Token{ID: BeginID, Pitch: -1, Inst: -1})
	curVel := -1
	for g := 0; g < len(notes); {
		s := notes[g].on
		h := g
		for h < len(notes) && notes[h].on == s {
			h++
		}
		group := notes[g:h]
		g = h
		sortGroup(group)
		if !o.offsUpTo(s) || !o.advance(s) {
			return o.dst, st, errStreamTooLong()
		}
		ms := int32(o.cur * o.shiftMS)
		for i := range group {
			n := &group[i]
			if n.dead {
				continue
			}
			if int(n.vel) != curVel {
				curVel = int(n.vel)
				o.dst = append(o.dst, Token{ID: voc.velBase + int32(n.vel), Time: ms, MS: ms, Pitch: -1, Inst: -1})
			}
			id := voc.onBase + int32(n.pitch)
			if n.drum {
				id = voc.hitBase + int32(n.pitch)
			}
			o.dst = append(o.dst, Token{ID: id, Time: ms, MS: ms, Pitch: int16(n.pitch), Inst: n.inst})
		}
		for i := range group {
			n := &group[i]
			if n.dead || n.drum {
				continue
			}
			if n.off == n.on {
				o.dst = append(o.dst, Token{ID: voc.offBase + int32(n.pitch), Time: ms, MS: ms, Pitch: int16(n.pitch), Inst: n.inst})
			} else {
				o.heap = pushOff(o.heap, pendingOff{step: n.off, pitch: n.pitch, inst: n.inst})
			}
		}
		if len(o.dst)-o.start > MaxStreamTokens {
			return o.dst, st, errStreamTooLong()
		}
	}
	if !o.offsUpTo(math.MaxInt64) {
		return o.dst, st, errStreamTooLong()
	}
	e.offs = o.heap
	ms := int32(o.cur * o.shiftMS)
	o.dst = append(o.dst, Token{ID: EndID, Time: ms, MS: ms, Pitch: -1, Inst: -1})
	st.Tokens = len(o.dst) - o.start
	return o.dst, st, nil
}

func errStreamTooLong() error {
	return fmt.Errorf("encode: %w: over %d tokens", ErrTooLong, MaxStreamTokens)
}

// perfOut is the output state of the performance encoder.
type perfOut struct {
	dst               []Token
	start             int
	cur               int64 // current time in steps
	maxSteps, shiftMS int64
	shiftBase         int32
	offBase           int32
	heap              []pendingOff
}

// advance emits the time-shifts up to step; false when the stream would grow past
// MaxStreamTokens.
func (o *perfOut) advance(to int64) bool {
	gap := to - o.cur
	if gap <= 0 {
		return true
	}
	if (len(o.dst)-o.start)+int(gap/o.maxSteps) > MaxStreamTokens {
		return false
	}
	for gap > 0 {
		n := min(gap, o.maxSteps)
		o.cur += n
		gap -= n
		ms := int32(o.cur * o.shiftMS)
		o.dst = append(o.dst, Token{ID: o.shiftBase + int32(n) - 1, Time: ms, MS: ms, Pitch: -1, Inst: -1})
	}
	return true
}

// offsUpTo emits the pending note-offs up to step, with the shifts between them.
func (o *perfOut) offsUpTo(step int64) bool {
	for len(o.heap) > 0 && o.heap[0].step <= step {
		off := o.heap[0]
		o.heap = popOff(o.heap)
		if !o.advance(off.step) {
			return false
		}
		ms := int32(o.cur * o.shiftMS)
		o.dst = append(o.dst, Token{ID: o.offBase + int32(off.pitch), Time: ms, MS: ms, Pitch: int16(off.pitch), Inst: off.inst})
	}
	return true
}

// sortGroup orders the notes of one onset by key, a note before a hit of the same key.
func sortGroup(g []pnote) {
	less := func(a, b *pnote) bool { return a.pitch < b.pitch || (a.pitch == b.pitch && !a.drum && b.drum) }
	i := 1
	for i < len(g) && !less(&g[i], &g[i-1]) {
		i++
	}
	if i >= len(g) {
		return // already in order, as single-track chords come from ingest
	}
	if len(g) > smallSort {
		slices.SortStableFunc(g, func(a, b pnote) int {
			if less(&a, &b) {
				return -1
			}
			if less(&b, &a) {
				return 1
			}
			return 0
		})
		return
	}
	for ; i < len(g); i++ {
		for j := i; j > 0 && less(&g[j], &g[j-1]); j-- {
			g[j], g[j-1] = g[j-1], g[j]
		}
	}
}

func offLess(a, b pendingOff) bool { return a.step < b.step || (a.step == b.step && a.pitch < b.pitch) }

func pushOff(h []pendingOff, o pendingOff) []pendingOff {
	h = append(h, o)
	for i := len(h) - 1; i > 0; {
		p := (i - 1) / 2
		if !offLess(h[i], h[p]) {
			break
		}
		h[i], h[p] = h[p], h[i]
		i = p
	}
	return h
}

func popOff(h []pendingOff) []pendingOff {
	n := len(h) - 1
	h[0] = h[n]
	h = h[:n]
	for i := 0; ; {
		l, r, m := 2*i+1, 2*i+2, i
		if l < n && offLess(h[l], h[m]) {
			m = l
		}
		if r < n && offLess(h[r], h[m]) {
			m = r
		}
		if m == i {
			break
		}
		h[i], h[m] = h[m], h[i]
		i = m
	}
	return h
}

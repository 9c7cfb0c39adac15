package tokenize

import (
	"cmp"
	"fmt"
	"math"
	"math/bits"
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
	slot    uint8 // 2*pitch, plus one for a hit: the note's bit in perfOut.keys
}

// Pending note-offs are packed in one integer each, so that integer order is the
// order they are emitted in: by step, then key. (No two pending note-offs share a
// step and key: a key sounds once at a time.) The low bits carry the instrument.
const (
	offStepShift  = 24
	offPitchShift = 16
)

func packOff(step int64, pitch uint8, inst int16) uint64 {
	return uint64(step)<<offStepShift | uint64(pitch)<<offPitchShift | uint64(uint16(inst))
}

// Events at one instant come in this order: note-offs of notes that began earlier
// (by key), then note-ons and hits (by key, a note before a hit of the same key),
// each after a set-velocity when the bin changes, then note-offs of notes that began
// at this very step (zero length after quantization), so every note-off follows its
// note-on.
//
// Notes come from ingest sorted by onset, so the encoder streams over them one onset
// group at a time; a piece out of onset order is sorted first.
func (e *Encoder) encodePerformance(p *ingest.Piece, v Variant, dst []Token) ([]Token, Stats, error) {
	st := Stats{Notes: len(p.Notes)}
	o, d, q := e.startPerformance(v, dst)
	// The next note is quantized straight into the slot after the group, so it is
	// never copied: a note of the next onset then moves to the group's start.
	// quantize stores every field, so the slot is not cleared first.
	group := e.pnotes[:0]
	for i := range p.Notes {
		if len(group) == cap(group) {
			group = slices.Grow(group, 1)
		}
		group = group[:len(group)+1]
		pn := &group[len(group)-1]
		switch e.quantize(&p.Notes[i], &q, &st, pn) {
		case qSkip:
			group = group[:len(group)-1]
			continue
		case qBad:
			e.pnotes = group
			return dst, st, e.quantizeError(&p.Notes[i], i)
		}
		if on := pn.on; len(group) > 1 && on != group[0].on {
			if on < group[0].on {
				e.pnotes = group
				return e.encodePerformanceUnsorted(p, v, dst)
			}
			var err error
			if d, err = e.emitGroup(&o, d, group[:len(group)-1], &st); err != nil {
				e.pnotes = group
				return d, st, err
			}
			group[0] = group[len(group)-1]
			group = group[:1]
		}
		o.add(group, len(group)-1)
	}
	e.pnotes = group
	return e.finishPerformance(&o, d, group, &st)
}

// startPerformance returns the output state, the stream with its begin token, and
// the quantizer of one performance encoding of variant v.
func (e *Encoder) startPerformance(v Variant, dst []Token) (perfOut, []Token, quantizer) {
	voc := e.vocab
	o := perfOut{start: len(dst), maxSteps: int64(voc.shiftSteps), shiftMS: int64(e.cfg.ShiftMS),
		offq: e.offs[:cap(e.offs)], curVel: -1, shiftBase: voc.shiftBase, offBase: voc.offBase}
	q := quantizer{scale: 1000 * v.Stretch / float64(e.cfg.ShiftMS), shiftMS: float64(e.cfg.ShiftMS),
		transpose: v.Transpose, lastStart: math.NaN()}
	return o, put(dst, BeginID, 0, 0, -1, -1), q
}

// encodePerformanceUnsorted encodes a piece whose notes are not in onset order.
func (e *Encoder) encodePerformanceUnsorted(p *ingest.Piece, v Variant, dst []Token) ([]Token, Stats, error) {
	st := Stats{Notes: len(p.Notes)}
	o, d, q := e.startPerformance(v, dst)
	notes := e.pnotes[:0]
	for i := range p.Notes {
		notes = append(notes, pnote{})
		switch e.quantize(&p.Notes[i], &q, &st, &notes[len(notes)-1]) {
		case qBad:
			e.pnotes = notes
			return dst, st, e.quantizeError(&p.Notes[i], i)
		case qSkip:
			notes = notes[:len(notes)-1]
		}
	}
	slices.SortStableFunc(notes, func(a, b pnote) int { return cmp.Compare(a.on, b.on) })
	e.pnotes = notes
	g := 0
	for h := range notes {
		if notes[h].on != notes[g].on {
			var err error
			if d, err = e.emitGroup(&o, d, notes[g:h], &st); err != nil {
				return d, st, err
			}
			g = h
		}
		o.add(notes[g:], h-g)
	}
	return e.finishPerformance(&o, d, notes[g:], &st)
}

// Outcomes of quantize.
const (
	qOK   = iota // the note is in *out
	qSkip        // left out (drums dropped, transposed out of range), counted in Stats
	qBad         // invalid times: quantizeError says why
)

// quantize turns one note into shift steps in *out. It stores field by field, for
// the reason put does.
func (e *Encoder) quantize(n *ingest.Note, q *quantizer, st *Stats, out *pnote) int {
	scale := q.scale
	if n.Drum {
		if e.dropDrums {
			st.DrumsDropped++
			return qSkip
		}
		on := n.Start * scale
		if !(on >= 0) || !(n.End >= n.Start) || n.End*scale*q.shiftMS > maxMS {
			return qBad
		}
		s := q.onStep(n.Start, on)
		out.on, out.off, out.pitch, out.vel, out.drum, out.inst = s, s, n.Pitch, e.vocab.velBins[n.Velocity&127], true, InstDrums
		out.slot = n.Pitch<<1 | 1
		return qOK
	}
	pitch := int(n.Pitch) + q.transpose
	if pitch < 0 || pitch > 127 {
		st.OutOfRange++
		return qSkip
	}
	on, off := n.Start*scale, n.End*scale
	if !(on >= 0) || !(off >= on) || off*q.shiftMS > maxMS {
		return qBad
	}
	out.on, out.off, out.pitch = q.onStep(n.Start, on), int64(math.Round(off)), uint8(pitch)
	out.vel, out.drum, out.inst, out.slot = e.vocab.velBins[n.Velocity&127], false, int16(n.Program), uint8(pitch)<<1
	return qOK
}

// quantizer holds what quantize needs for one variant, and the onset step of the
// last note: the notes of a chord share their start, so it is rounded once.
type quantizer struct {
	scale     float64 // seconds to steps
	shiftMS   float64 // the config's, converted once
	transpose int
	lastStart float64 // NaN before the first note
	lastOn    int64
}

// onStep is the step of a note starting at start seconds, on = start*scale.
func (q *quantizer) onStep(start, on float64) int64 {
	if start != q.lastStart {
		q.lastStart, q.lastOn = start, int64(math.Round(on))
	}
	return q.lastOn
}

// quantizeError describes why note i could not be quantized.
func (e *Encoder) quantizeError(n *ingest.Note, i int) error {
	if n.End*1000 > maxMS/4 { // stretch is at most 4
		return fmt.Errorf("encode: %w: note %d ends at %.0f s", ErrTooLong, i, n.End)
	}
	return fmt.Errorf("encode: %w: note %d has times %v..%v s", ErrBadPiece, i, n.Start, n.End)
}

// finishPerformance emits the last group, the remaining note-offs and the end token.
func (e *Encoder) finishPerformance(o *perfOut, d []Token, last []pnote, st *Stats) ([]Token, Stats, error) {
	if len(last) > 0 {
		var err error
		if d, err = e.emitGroup(o, d, last, st); err != nil {
			return d, *st, err
		}
	}
	var ok bool
	if d, ok = o.offsBefore(d, math.MaxUint64); !ok {
		return d, *st, errStreamTooLong()
	}
	e.offs = o.offq
	st.Encoded = st.Notes - st.DrumsDropped - st.OutOfRange - st.Merged
	ms := int32(o.cur * o.shiftMS)
	d = put(d, EndID, ms, ms, -1, -1)
	st.Tokens = len(d) - o.start
	return d, *st, nil
}

// add adds note i of the onset group g to the group's keys (see perfOut.keys),
// merging it into an earlier note of its key. The group's notes are added as they
// come, so that emitGroup need not go over them once more to order them. It counts
// merges and retriggers in o until emitGroup adds them to the stats: an error before
// then leaves the group out of the stats.
//
// One note per key at a time: at the same onset keep the longest (then the loudest,
// then the lowest program, so piece order does not matter); a key still sounding
// past this onset ends here (retrigger).
func (o *perfOut) add(g []pnote, i int) {
	n := &g[i]
	k := uint(n.slot)
	if bit := uint64(1) << (k & 63); o.keys[k>>6]&bit == 0 {
		o.keys[k>>6] |= bit
		o.first[k] = uint32(i)
		if s := g[0].on; !n.drum && o.keyOff[n.pitch] > s {
			o.retrigger(n.pitch, s)
			o.retriggered++
		}
		return
	}
	o.merged++
	if l := &g[o.first[k]]; n.off > l.off || (n.off == l.off && (n.vel > l.vel || (n.vel == l.vel && n.inst < l.inst))) {
		l.off, l.vel, l.inst = n.off, n.vel, n.inst
	}
}

// emitGroup emits the notes that start at one step, all added with add, appending
// to d.
//
// The token slice is passed and returned rather than kept in perfOut, and buffers
// are stored back only when they grow: a slice stored through a pointer costs a
// write barrier each time while the collector runs, which it often does while
// ingest allocates.
func (e *Encoder) emitGroup(o *perfOut, d []Token, group []pnote, st *Stats) ([]Token, error) {
	voc := e.vocab
	s := group[0].on
	keys := o.keys
	o.keys = [4]uint64{}
	st.Merged += o.merged
	st.Retriggered += o.retriggered
	o.merged, o.retriggered = 0, 0
	// Most groups have no note-off due and follow the last event closely: the
	// calls are skipped then (offsBefore would find nothing to do).
	ok := true
	if lim := uint64(s+1) << offStepShift; o.head < o.qlen && o.offq[o.head] < lim {
		d, ok = o.offsBefore(d, lim)
	}
	if ok && s > o.cur {
		d, ok = o.advance(d, s)
	}
	if !ok {
		return d, errStreamTooLong()
	}
	ms := int32(o.cur * o.shiftMS)
	vel := o.curVel
	zero := false // a note of zero length, whose note-off follows all note-ons
	// Each kept note takes at most a set-velocity and a note-on here. They are
	// written into reserved room, the set-velocity always and kept only when the bin
	// changes: bins change in no pattern a branch predictor can learn.
	if room := 2 * len(group); cap(d)-len(d) < room {
		d = slices.Grow(d, room)
	}
	w, j := d[:len(d)+2*len(group)], len(d)
	for wi, word := range keys {
		for ; word != 0; word &= word - 1 {
			n := &group[o.first[wi<<6|bits.TrailingZeros64(word)]]
			t := &w[j]
			t.ID, t.Time, t.MS, t.Pitch, t.Inst = voc.velBase+int32(n.vel), ms, ms, -1, -1
			if int(n.vel) != vel {
				j++
			}
			vel = int(n.vel)
			id := voc.onBase + int32(n.pitch)
			if n.drum {
				id = voc.hitBase + int32(n.pitch)
			}
			t = &w[j]
			t.ID, t.Time, t.MS, t.Pitch, t.Inst = id, ms, ms, int16(n.pitch), n.inst
			j++
			if n.drum {
				continue
			}
			o.keyOff[n.pitch] = n.off
			if n.off == n.on {
				zero = true
			} else {
				o.pushOff(packOff(n.off, n.pitch, n.inst))
			}
		}
	}
	d = w[:j]
	if zero {
		for wi, word := range keys {
			for ; word != 0; word &= word - 1 {
				if n := &group[o.first[wi<<6|bits.TrailingZeros64(word)]]; !n.drum && n.off == n.on {
					d = put(d, voc.offBase+int32(n.pitch), ms, ms, int16(n.pitch), n.inst)
				}
			}
		}
	}
	o.curVel = vel
	if len(d)-o.start > MaxStreamTokens {
		return d, errStreamTooLong()
	}
	return d, nil
}

func errStreamTooLong() error {
	return fmt.Errorf("encode: %w: over %d tokens", ErrTooLong, MaxStreamTokens)
}

// perfOut is the output state of the performance encoder.
type perfOut struct {
	start             int
	cur               int64 // current time in steps
	maxSteps, shiftMS int64
	curVel            int // current velocity bin, -1 before the first
	shiftBase         int32
	offBase           int32
	// offq[head:qlen] are the pending note-offs, sorted; offq is its whole buffer
	// and is stored back only when it grows.
	offq       []uint64
	head, qlen int
	keyOff     [128]int64 // off step of each key's latest note
	// keys and first order the onset group being built by key, a note before a hit
	// of the same key: a bitmap of the keys present (bit 2*pitch, plus one for a
	// hit), visited in order in a few words, and the group index of each key's
	// first note. Sorting the group cost more than the rest of emitGroup.
	keys  [4]uint64
	first [256]uint32
	// merged and retriggered count the group's notes that add merged and
	// retriggered.
	merged, retriggered int
}

// retrigger moves the pending note-off of key (the note sounding past step) to step.
func (o *perfOut) retrigger(key uint8, step int64) {
	q := o.offq[:o.qlen]
	for i := o.head; i < len(q); i++ {
		if k := q[i]; uint8(k>>offPitchShift) == key && int64(k>>offStepShift) > step {
			k = packOff(step, key, int16(uint16(k)))
			for ; i > o.head && q[i-1] > k; i-- {
				q[i] = q[i-1]
			}
			q[i] = k
			return
		}
	}
}

// pushOff queues a note-off. Notes arrive by onset and most end after the ones
// already sounding, so the insertion point is usually at or near the end.
func (o *perfOut) pushOff(k uint64) {
	q, h, n := o.offq, o.head, o.qlen
	if h >= 64 && 2*h >= n {
		n = copy(q, q[h:n])
		h = 0
	}
	if n == len(q) {
		q = slices.Grow(q[:n], 1)
		q = q[:cap(q)]
		o.offq = q
	}
	i := n
	for ; i > h && q[i-1] > k; i-- {
		q[i] = q[i-1]
	}
	q[i] = k
	o.head, o.qlen = h, n+1
}

// advance appends the time-shifts up to step to d; false when the stream would grow
// past MaxStreamTokens.
func (o *perfOut) advance(d []Token, to int64) ([]Token, bool) {
	gap := to - o.cur
	if gap <= 0 {
		return d, true
	}
	if gap > o.maxSteps && (len(d)-o.start)+int(gap/o.maxSteps) > MaxStreamTokens {
		return d, false
	}
	for gap > 0 {
		n := min(gap, o.maxSteps)
		o.cur += n
		gap -= n
		ms := int32(o.cur * o.shiftMS)
		d = put(d, o.shiftBase+int32(n)-1, ms, ms, -1, -1)
	}
	return d, true
}

// offsBefore appends the pending note-offs packed below lim to d, with the shifts
// between them.
func (o *perfOut) offsBefore(d []Token, lim uint64) ([]Token, bool) {
	q, h := o.offq[:o.qlen], o.head
	for h < len(q) && q[h] < lim {
		k := q[h]
		h++
		if to := int64(k >> offStepShift); to > o.cur {
			var ok bool
			if d, ok = o.advance(d, to); !ok {
				o.head = h
				return d, false
			}
		}
		ms := int32(o.cur * o.shiftMS)
		pitch := int16(uint8(k >> offPitchShift))
		d = put(d, o.offBase+int32(pitch), ms, ms, pitch, int16(uint16(k)))
	}
	if h == len(q) {
		h, o.qlen = 0, 0
	}
	o.head = h
	return d, true
}

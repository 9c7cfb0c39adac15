package tokenize

import (
	"cmp"
	"fmt"
	"math"
	"slices"

	"github.com/relshard/relshard/ingest"
)

// gnote is one note on the grid: its onset step and, packed in key so that notes
// of one onset sort by a single integer compare, its instrument, key, duration and
// velocity bin.
type gnote struct {
	step int64
	key  uint64
}

// gridKey packs a grid note: family (0-15, 16 for drums), key, duration, velocity.
func gridKey(inst int16, pitch uint8, dur int32, vel uint8) uint64 {
	f := uint64(inst / 8)
	if inst == InstDrums {
		f = 16
	}
	return f<<40 | uint64(pitch)<<32 | uint64(uint32(dur))<<8 | uint64(vel)
}

// unpackGrid undoes gridKey.
func unpackGrid(k uint64) (inst int16, pitch uint8, dur int32, vel uint8) {
	inst = int16(k>>40) * 8
	if k>>40 == 16 {
		inst = InstDrums
	}
	return inst, uint8(k >> 32), int32(uint32(k) >> 8), uint8(k)
}

// barInfo is one meter change on the grid.
type barInfo struct {
	step     int64
	num, den int
}

// barMark records, for one bar of the stream last encoded, the stream index of its
// bar token and the latest meter, tempo and instrument tokens (ID 0 for none): the
// meter and tempo as of this bar, the instrument as of just before it. Windows uses
// them to know the state at a cut without following every token. (They are copies:
// Windows writes window prefixes over the stream.)
type barMark struct {
	at                 int32
	meter, tempo, inst Token
}

// maxTick keeps tick arithmetic far from int64 overflow.
const maxTick = 1 << 40

// stepOf maps a tick to the nearest grid step.
func (e *Encoder) stepOf(tick int64) int64 {
	g := int64(e.cfg.GridPerQuarter)
	if e.clock.smpte > 0 {
		return int64(math.Round(float64(tick) / e.clock.smpte * 2 * float64(g)))
	}
	tpq := int64(e.clock.tpq)
	return (tick*g*2 + tpq) / (2 * tpq)
}

// msOfStep is the time of a grid step through the piece's tempo map.
func (e *Encoder) msOfStep(step int64) int32 {
	tick := float64(step) * e.clock.tpq / float64(e.cfg.GridPerQuarter)
	return int32(min(math.Round(e.clock.seconds(tick)*1000), maxMS))
}

func instID(v *Vocab, inst int16) int32 {
	if inst == InstDrums {
		return v.instBase + 16
	}
	return v.instBase + int32(inst/8)
}

func (e *Encoder) encodeGrid(p *ingest.Piece, v Variant, dst []Token) ([]Token, Stats, error) {
	var st Stats
	st.Notes = len(p.Notes)
	voc := e.vocab
	if p.SMPTEFPS <= 0 && p.TicksPerQuarter <= 0 {
		return dst, st, fmt.Errorf("encode: %w: ticks per quarter %d", ErrBadPiece, p.TicksPerQuarter)
	}
	e.clock.reset(p)
	notes := e.gnotes[:0]
	maxDur := int64(e.cfg.MaxDurationSteps)
	sorted := true
	lastTick, lastStep := int64(-1), int64(0) // notes of a chord share their start
	for i := range p.Notes {
		n := &p.Notes[i]
		if n.Drum && e.dropDrums {
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
		if n.StartTick < 0 || n.EndTick < n.StartTick || n.EndTick > maxTick {
			if n.EndTick > maxTick {
				return dst, st, fmt.Errorf("encode: %w: note %d ends at tick %d", ErrTooLong, i, n.EndTick)
			}
			return dst, st, fmt.Errorf("encode: %w: note %d has ticks %d..%d", ErrBadPiece, i, n.StartTick, n.EndTick)
		}
		if n.StartTick != lastTick {
			lastTick, lastStep = n.StartTick, e.stepOf(n.StartTick)
		}
		s := lastStep
		d := e.stepOf(n.EndTick) - s
		if d < 1 {
			d = 1
			st.Lengthened++
		} else if d > maxDur {
			d = maxDur
			st.Clipped++
		}
		inst := int16(n.Program / 8 * 8)
		if n.Drum {
			inst = InstDrums
		}
		g := gnote{step: s, key: gridKey(inst, uint8(pitch), int32(d), voc.velBins[n.Velocity&127])}
		if len(notes) > 0 && g.step < notes[len(notes)-1].step {
			sorted = false
		}
		notes = append(notes, g)
	}
	if !sorted { // ingest sorts notes by onset; hand-made pieces may not be
		slices.SortStableFunc(notes, func(a, b gnote) int { return cmp.Compare(a.step, b.step) })
	}
	e.gnotes = notes
	st.Encoded = len(notes)

	meters := e.bars[:0]
	for _, m := range p.Meters {
		if m.Tick < 0 || m.Tick > maxTick {
			continue
		}
		meters = append(meters, barInfo{step: e.stepOf(m.Tick), num: int(m.Num), den: int(m.Denom)})
	}
	e.bars = meters

	// Every bar costs a token, and no bar is longer than maxPos steps.
	if len(notes) > 0 && notes[len(notes)-1].step/int64(voc.maxPos) > MaxStreamTokens {
		return dst, st, errStreamTooLong()
	}
	start := len(dst)
	dst = put(dst, BeginID, 0, 0, -1, -1)
	meterID := voc.meterID[[2]int{4, 4}]
	barLen := int64(4 * e.cfg.GridPerQuarter)
	prevMeter, prevTempo := int32(-1), int32(-1)
	curInst := int16(-1)
	var barStart int64
	mi, ni := 0, 0
	marks := e.marks[:0]
	var lastMeter, lastTempo, lastInst Token
	for ni < len(notes) {
		for mi < len(meters) && meters[mi].step <= barStart {
			m := meters[mi]
			if m.step < barStart {
				st.MetersMoved++
			}
			if id, ok := voc.meterID[[2]int{m.num, m.den}]; ok {
				meterID = id
			} else {
				meterID = voc.meterID[[2]int{4, 4}]
				st.MetersUnsupported++
			}
			barLen = int64(voc.meters[meterID-voc.meterBase].steps)
			mi++
		}
		if barStart > math.MaxInt32-int64(voc.maxPos) {
			return dst, st, fmt.Errorf("encode: %w: grid step %d", ErrTooLong, barStart)
		}
		bt := int32(barStart)
		bms := e.msOfStep(barStart)
		mark := barMark{at: int32(len(dst) - start), inst: lastInst}
		dst = put(dst, voc.barID, bt, bms, -1, -1)
		if meterID != prevMeter {
			dst = put(dst, meterID, bt, bms, -1, -1)
			lastMeter = Token{ID: meterID, Time: bt, MS: bms, Pitch: -1, Inst: -1}
			prevMeter = meterID
		}
		us := e.clock.usPerQuarterAt(float64(barStart) * e.clock.tpq / float64(e.cfg.GridPerQuarter))
		tempoID := voc.tempoBase + int32(voc.tempoBin(60e6/us))
		if tempoID != prevTempo {
			dst = put(dst, tempoID, bt, bms, -1, -1)
			lastTempo = Token{ID: tempoID, Time: bt, MS: bms, Pitch: -1, Inst: -1}
			prevTempo = tempoID
		}
		mark.meter, mark.tempo = lastMeter, lastTempo
		marks = append(marks, mark)
		barEnd := barStart + barLen
		for ni < len(notes) && notes[ni].step < barEnd {
			s := notes[ni].step
			t, ms := int32(s), e.msOfStep(s)
			dst = put(dst, voc.posBase+int32(s-barStart), t, ms, -1, -1)
			h := ni
			for h < len(notes) && notes[h].step == s {
				h++
			}
			if cap(e.keys) < h-ni { // stored back only when it grows, as in emitGroup
				e.keys = make([]uint64, 0, 2*(h-ni))
			}
			keys := e.keys[:h-ni]
			for i, g := range notes[ni:h] {
				keys[i] = g.key
			}
			ni = h
			sortKeys(keys)
			for _, k := range keys {
				inst, pitch, dur, vel := unpackGrid(k)
				if inst != curInst {
					id := instID(voc, inst)
					dst = put(dst, id, t, ms, -1, inst)
					lastInst = Token{ID: id, Time: t, MS: ms, Pitch: -1, Inst: inst}
					curInst = inst
				}
				dst = put(dst, voc.pitchBase+int32(pitch), t, ms, int16(pitch), inst)
				dst = put(dst, voc.durBase+dur-1, t, ms, -1, inst)
				dst = put(dst, voc.velBase+int32(vel), t, ms, -1, inst)
			}
		}
		barStart = barEnd
		if len(dst)-start > MaxStreamTokens {
			return dst, st, errStreamTooLong()
		}
	}
	e.marks = marks
	last := dst[len(dst)-1]
	dst = put(dst, EndID, last.Time, last.MS, -1, -1)
	st.Tokens = len(dst) - start
	return dst, st, nil
}

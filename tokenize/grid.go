package tokenize

import (
	"cmp"
	"fmt"
	"math"
	"math/bits"
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

// stepOf maps a tick (0..maxTick) to the nearest grid step.
func (e *Encoder) stepOf(tick int64) int64 {
	if e.clock.smpte > 0 {
		return int64(math.Round(float64(tick) / e.clock.smpte * 2 * float64(e.cfg.GridPerQuarter)))
	}
	return e.ticks.step(tick)
}

// tickSteps maps the ticks of a metric piece to grid steps: step = (tick*2g + tpq) /
// 2tpq for g steps per quarter, rounding half up. It divides through a multiply by
// the reciprocal: a 64-bit division costs several times as much, and there are two
// per grid note.
type tickSteps struct {
	mul, add uint64 // 2g, tpq
	d, m     uint64 // divisor 2tpq (at least 2), floor((2^64-1)/d)
}

func newTickSteps(g, tpq uint64) tickSteps {
	return tickSteps{mul: 2 * g, add: tpq, d: 2 * tpq, m: math.MaxUint64 / (2 * tpq)}
}

// step is the step of tick.
func (t *tickSteps) step(tick int64) int64 { return t.quo(uint64(tick)*t.mul + t.add) }

// quo is x/d. m undershoots 2^64/d by less than one, so for x < 2^63 the high word
// of x*m is the quotient or one below it; the remainder tells which.
func (t *tickSteps) quo(x uint64) int64 {
	q, _ := bits.Mul64(x, t.m)
	if x-q*t.d >= t.d {
		q++
	}
	return int64(q)
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
	metric := e.clock.smpte == 0
	if metric {
		e.ticks = newTickSteps(uint64(e.cfg.GridPerQuarter), uint64(e.clock.tpq)) // tpq is at least 1
	}
	notes := e.gnotes[:0]
	maxDur := int64(e.cfg.MaxDurationSteps)
	sorted := true
	// Notes of a chord share their start, and often their end.
	lastTick, lastStep, lastEndTick, lastEndStep := int64(-1), int64(0), int64(-1), int64(0)
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
			lastTick = n.StartTick
			if metric { // stepOf is too big to be inlined
				lastStep = e.ticks.step(n.StartTick)
			} else {
				lastStep = e.stepOf(n.StartTick)
			}
		}
		if n.EndTick != lastEndTick {
			lastEndTick = n.EndTick
			if metric {
				lastEndStep = e.ticks.step(n.EndTick)
			} else {
				lastEndStep = e.stepOf(n.EndTick)
			}
		}
		s := lastStep
		d := lastEndStep - s
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
	lastUS, tempoID := math.NaN(), int32(0)
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
		// The tempo bin takes logarithms; most bars keep the tempo of the one before.
		if us := e.clock.usPerQuarterAt(float64(barStart) * e.clock.tpq / float64(e.cfg.GridPerQuarter)); us != lastUS {
			lastUS, tempoID = us, voc.tempoBase+int32(voc.tempoBin(60e6/us))
		}
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
			group := notes[ni:h]
			ni = h
			sortGroup(group)
			for i := range group {
				inst, pitch, dur, vel := unpackGrid(group[i].key)
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

// smallSort is the group size up to which groups are insertion-sorted.
const smallSort = 24

// sortGroup sorts the notes of one onset (all of one step) by key, in place:
// insertion sort for the usual few notes, the standard library's sort for big
// groups. Notes of equal keys are equal, so the order among them does not matter.
func sortGroup(g []gnote) {
	if len(g) > smallSort {
		slices.SortFunc(g, func(a, b gnote) int { return cmp.Compare(a.key, b.key) })
		return
	}
	for i := 1; i < len(g); i++ {
		for j := i; j > 0 && g[j].key < g[j-1].key; j-- {
			g[j], g[j-1] = g[j-1], g[j]
		}
	}
}

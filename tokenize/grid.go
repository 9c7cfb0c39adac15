package tokenize

import (
	"cmp"
	"fmt"
	"math"
	"slices"

	"github.com/relshard/relshard/ingest"
)

// gnote is one note on the grid.
type gnote struct {
	step  int64
	dur   int32
	pitch uint8
	vel   uint8 // bin
	inst  int16 // family*8 or InstDrums
}

// barInfo is one meter change on the grid.
type barInfo struct {
	step     int64
	num, den int
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
		if n.StartTick < 0 || n.EndTick < n.StartTick || n.EndTick > maxTick {
			if n.EndTick > maxTick {
				return dst, st, fmt.Errorf("encode: %w: note %d ends at tick %d", ErrTooLong, i, n.EndTick)
			}
			return dst, st, fmt.Errorf("encode: %w: note %d has ticks %d..%d", ErrBadPiece, i, n.StartTick, n.EndTick)
		}
		s := e.stepOf(n.StartTick)
		d := e.stepOf(n.EndTick) - s
		if d < 1 {
			d = 1
			st.Lengthened++
		} else if d > maxDur {
			d = maxDur
			st.Clipped++
		}
		g := gnote{step: s, dur: int32(d), pitch: uint8(pitch), vel: uint8(voc.velBin(n.Velocity)), inst: int16(n.Program / 8 * 8)}
		if n.Drum {
			g.inst = InstDrums
		}
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
	dst = append(dst, Token{ID: BeginID, Pitch: -1, Inst: -1})
	meterID := voc.meterID[[2]int{4, 4}]
	barLen := int64(4 * e.cfg.GridPerQuarter)
	prevMeter, prevTempo := int32(-1), int32(-1)
	curInst := int16(-1)
	var barStart int64
	mi, ni := 0, 0
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
		dst = append(dst, Token{ID: voc.barID, Time: bt, MS: bms, Pitch: -1, Inst: -1})
		if meterID != prevMeter {
			dst = append(dst, Token{ID: meterID, Time: bt, MS: bms, Pitch: -1, Inst: -1})
			prevMeter = meterID
		}
		us := e.clock.usPerQuarterAt(float64(barStart) * e.clock.tpq / float64(e.cfg.GridPerQuarter))
		tempoID := voc.tempoBase + int32(voc.tempoBin(60e6/us))
		if tempoID != prevTempo {
			dst = append(dst, Token{ID: tempoID, Time: bt, MS: bms, Pitch: -1, Inst: -1})
			prevTempo = tempoID
		}
		barEnd := barStart + barLen
		for ni < len(notes) && notes[ni].step < barEnd {
			s := notes[ni].step
			t, ms := int32(s), e.msOfStep(s)
			dst = append(dst, Token{ID: voc.posBase + int32(s-barStart), Time: t, MS: ms, Pitch: -1, Inst: -1})
			h := ni
			for h < len(notes) && notes[h].step == s {
				h++
			}
			group := notes[ni:h]
			ni = h
			sortGridGroup(group)
			for gi := range group {
				n := &group[gi]
				if n.inst != curInst {
					dst = append(dst, Token{ID: instID(voc, n.inst), Time: t, MS: ms, Pitch: -1, Inst: n.inst})
					curInst = n.inst
				}
				dst = append(dst,
					Token{ID: voc.pitchBase + int32(n.pitch), Time: t, MS: ms, Pitch: int16(n.pitch), Inst: n.inst},
					Token{ID: voc.durBase + n.dur - 1, Time: t, MS: ms, Pitch: -1, Inst: n.inst},
					Token{ID: voc.velBase + int32(n.vel), Time: t, MS: ms, Pitch: -1, Inst: n.inst})
			}
		}
		barStart = barEnd
		if len(dst)-start > MaxStreamTokens {
			return dst, st, errStreamTooLong()
		}
	}
	last := dst[len(dst)-1]
	dst = append(dst, Token{ID: EndID, Time: last.Time, MS: last.MS, Pitch: -1, Inst: -1})
	st.Tokens = len(dst) - start
	return dst, st, nil
}

func gridLess(a, b *gnote) bool {
	if a.inst != b.inst {
		return a.inst < b.inst
	}
	if a.pitch != b.pitch {
		return a.pitch < b.pitch
	}
	if a.dur != b.dur {
		return a.dur < b.dur
	}
	return a.vel < b.vel
}

// sortGridGroup orders the notes of one onset by instrument, key, duration, velocity.
func sortGridGroup(g []gnote) {
	i := 1
	for i < len(g) && !gridLess(&g[i], &g[i-1]) {
		i++
	}
	if i >= len(g) {
		return
	}
	if len(g) > smallSort {
		slices.SortStableFunc(g, func(a, b gnote) int {
			if gridLess(&a, &b) {
				return -1
			}
			if gridLess(&b, &a) {
				return 1
			}
			return 0
		})
		return
	}
	for ; i < len(g); i++ {
		for j := i; j > 0 && gridLess(&g[j], &g[j-1]); j-- {
			g[j], g[j-1] = g[j-1], g[j]
		}
	}
}

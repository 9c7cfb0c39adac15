package ingest

import (
	"math"
	"sort"
)

// TimeMap converts between ticks and seconds for one piece. Build it once with
// Piece.TimeMap for many lookups; Piece.Seconds and Piece.TickOf are one-off
// conveniences that walk the tempo list.
//
// For metrical division the map follows the piece's Set Tempo events (SMF 1.0: the
// default is 500,000 µs per quarter note until the first one; when several fall on one
// tick the last one rules). For SMPTE division a tick is 1/(fps × ticks per frame)
// seconds and tempo events do not change it (SMF 1.0).
type TimeMap struct {
	// Times are kept as numerators over one denominator (den: 10^6 × ticks per
	// quarter, or frames per second × ticks per frame): exact integers in float64
	// for any realistic piece, so each time is one correctly rounded division.
	segs []tmSegment
	den  float64
}

// tmSegment is a stretch of constant tempo.
type tmSegment struct {
	tick int64   // first tick of the segment; segs[0].tick == 0
	acc  float64 // time at tick, times den
	num  float64 // time per tick, times den (µs per quarter, or 1 / 1001 for SMPTE)
}

// TimeMap builds the tick/second map of the piece.
func (p *Piece) TimeMap() *TimeMap {
	m := &TimeMap{}
	m.build(p)
	return m
}

func (m *TimeMap) build(p *Piece) {
	m.segs = m.segs[:0]
	if p.SMPTEFPS > 0 && p.TicksPerFrame > 0 {
		m.den = p.SMPTEFPS * float64(p.TicksPerFrame)
		num := 1.0
		if p.SMPTEFPS == smpteDropFPS {
			m.den, num = 30000*float64(p.TicksPerFrame), 1001
		}
		m.segs = append(m.segs, tmSegment{0, 0, num})
		return
	}
	tpq := float64(p.TicksPerQuarter)
	if tpq <= 0 {
		tpq = 1
	}
	m.den = 1e6 * tpq
	m.segs = append(m.segs, tmSegment{0, 0, defaultUSPerQuarter})
	for _, t := range p.Tempos {
		if t.USPerQuarter == 0 {
			continue
		}
		last := &m.segs[len(m.segs)-1]
		if t.Tick <= last.tick {
			last.num = float64(t.USPerQuarter) // same tick (or out of order, which Parse never produces): the later one rules
			continue
		}
		acc := last.acc + float64(t.Tick-last.tick)*last.num
		m.segs = append(m.segs, tmSegment{t.Tick, acc, float64(t.USPerQuarter)})
	}
}

// at returns the seconds of tick within segment i.
func (m *TimeMap) at(i int, tick int64) float64 {
	s := &m.segs[i]
	return (s.acc + float64(tick-s.tick)*s.num) / m.den
}

// forward returns the segment holding tick, for tick at or after segment i: the
// cursor of ticks met in rising order.
func (m *TimeMap) forward(i int, tick int64) int {
	for i+1 < len(m.segs) && m.segs[i+1].tick <= tick {
		i++
	}
	return i
}

// near returns the segment holding tick, for tick at or after segment i and
// usually within a few segments of it (a note's end after its start); farther
// than 8, it searches.
func (m *TimeMap) near(i int, tick int64) int {
	e := i
	for segs := m.segs; e+1 < len(segs) && segs[e+1].tick <= tick; e++ {
		if e-i >= 8 {
			return m.segment(tick)
		}
	}
	return e
}

// segment returns the index of the segment holding tick.
func (m *TimeMap) segment(tick int64) int {
	if len(m.segs) < 8 {
		i := len(m.segs) - 1
		for i > 0 && m.segs[i].tick > tick {
			i--
		}
		return i
	}
	i := sort.Search(len(m.segs), func(i int) bool { return m.segs[i].tick > tick }) - 1
	if i < 0 {
		i = 0
	}
	return i
}

// Seconds returns the time of tick in seconds from the start of the piece.
func (m *TimeMap) Seconds(tick int64) float64 {
	return m.at(m.segment(tick), tick)
}

// Tick returns the tick at the given time, rounded to the nearest tick (seconds
// before 0 give 0).
func (m *TimeMap) Tick(seconds float64) int64 {
	if !(seconds > 0) {
		return 0
	}
	target := seconds * m.den
	i := sort.Search(len(m.segs), func(i int) bool { return m.segs[i].acc > target }) - 1
	if i < 0 {
		i = 0
	}
	s := &m.segs[i]
	t := float64(s.tick) + math.Round((target-s.acc)/s.num)
	if t > math.MaxInt64/2 {
		return math.MaxInt64 / 2
	}
	return int64(t)
}

// Seconds returns the time of tick in seconds (see TimeMap). It walks the tempo list;
// for many lookups build a TimeMap once.
func (p *Piece) Seconds(tick int64) float64 {
	var m TimeMap
	var seg [4]tmSegment
	m.segs = seg[:0]
	m.build(p)
	return m.Seconds(tick)
}

// TickOf returns the tick at the given time in seconds, rounded to the nearest tick.
func (p *Piece) TickOf(seconds float64) int64 {
	return p.TimeMap().Tick(seconds)
}

// MeterAt returns the time signature in effect at tick: the last Meter at or before
// it (several at one tick: the last), or 4/4 from tick 0 when there is none (SMF 1.0).
func (p *Piece) MeterAt(tick int64) Meter {
	m := Meter{Tick: 0, Num: defaultMeterNum, Denom: defaultMeterDenom}
	i := sort.Search(len(p.Meters), func(i int) bool { return p.Meters[i].Tick > tick })
	if i > 0 {
		m = p.Meters[i-1]
	}
	return m
}

// KeyAt returns the key signature in effect at tick and whether there is one.
func (p *Piece) KeyAt(tick int64) (Key, bool) {
	i := sort.Search(len(p.Keys), func(i int) bool { return p.Keys[i].Tick > tick })
	if i == 0 {
		return Key{}, false
	}
	return p.Keys[i-1], true
}

// Duration returns the length of the piece in seconds: the time of EndTick.
func (p *Piece) Duration() float64 { return p.Seconds(p.EndTick) }

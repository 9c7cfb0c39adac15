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
	ticks []int64   // tick where each segment starts; ticks[0] == 0
	secs  []float64 // seconds at ticks[i]
	num   []float64 // seconds per tick within segment i is num[i]/den[i]: kept apart so
	den   []float64 // that dt*num/den is one correctly rounded division
}

// TimeMap builds the tick/second map of the piece.
func (p *Piece) TimeMap() *TimeMap {
	m := &TimeMap{}
	m.build(p)
	return m
}

func (m *TimeMap) build(p *Piece) {
	m.ticks, m.secs, m.num, m.den = m.ticks[:0], m.secs[:0], m.num[:0], m.den[:0]
	if p.SMPTEFPS > 0 && p.TicksPerFrame > 0 {
		num, den := 1.0, p.SMPTEFPS*float64(p.TicksPerFrame)
		if p.SMPTEFPS == smpteDropFPS {
			num, den = 1001, 30000*float64(p.TicksPerFrame)
		}
		m.ticks = append(m.ticks, 0)
		m.secs = append(m.secs, 0)
		m.num = append(m.num, num)
		m.den = append(m.den, den)
		return
	}
	tpq := float64(p.TicksPerQuarter)
	if tpq <= 0 {
		tpq = 1
	}
	den := 1e6 * tpq
	m.ticks = append(m.ticks, 0)
	m.secs = append(m.secs, 0)
	m.num = append(m.num, defaultUSPerQuarter)
	m.den = append(m.den, den)
	for _, t := range p.Tempos {
		if t.USPerQuarter == 0 {
			continue
		}
		last := len(m.ticks) - 1
		if t.Tick <= m.ticks[last] {
			m.num[last] = float64(t.USPerQuarter) // same tick (or out of order, which Parse never produces): the later one rules
			continue
		}
		m.ticks = append(m.ticks, t.Tick)
		m.secs = append(m.secs, m.at(last, t.Tick))
		m.num = append(m.num, float64(t.USPerQuarter))
		m.den = append(m.den, den)
	}
}

// at returns the seconds of tick within segment i.
func (m *TimeMap) at(i int, tick int64) float64 {
	return m.secs[i] + float64(tick-m.ticks[i])*m.num[i]/m.den[i]
}

// segment returns the index of the segment holding tick.
func (m *TimeMap) segment(tick int64) int {
	if len(m.ticks) < 8 {
		i := len(m.ticks) - 1
		for i > 0 && m.ticks[i] > tick {
			i--
		}
		return i
	}
	i := sort.Search(len(m.ticks), func(i int) bool { return m.ticks[i] > tick }) - 1
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
	i := sort.Search(len(m.secs), func(i int) bool { return m.secs[i] > seconds }) - 1
	if i < 0 {
		i = 0
	}
	t := float64(m.ticks[i]) + math.Round((seconds-m.secs[i])*m.den[i]/m.num[i])
	if t > math.MaxInt64/2 {
		return math.MaxInt64 / 2
	}
	return int64(t)
}

// Seconds returns the time of tick in seconds (see TimeMap). It walks the tempo list;
// for many lookups build a TimeMap once.
func (p *Piece) Seconds(tick int64) float64 {
	var m TimeMap
	var t [1]int64
	var s [1]float64
	var n, d [1]float64
	m.ticks, m.secs, m.num, m.den = t[:0], s[:0], n[:0], d[:0]
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

package tokenize

import (
	"sort"

	"github.com/relshard/relshard/ingest"
)

// clock converts (fractional) ticks to seconds through a piece's tempo map. Its
// segment buffer is reused between pieces.
type clock struct {
	smpte   float64 // ticks per second for SMPTE divisions; 0 for metric
	tpq     float64
	segs    []tempoSeg
	lastSeg int
}

type tempoSeg struct {
	tick       float64
	sec        float64
	secPerTick float64
}

// defaultUSPerQuarter is the tempo when a file sets none (SMF 1.0: 120 BPM).
const defaultUSPerQuarter = 500000

func (c *clock) reset(p *ingest.Piece) {
	c.segs = c.segs[:0]
	c.lastSeg = 0
	c.smpte = 0
	if p.SMPTEFPS > 0 {
		c.smpte = p.SMPTEFPS * float64(max(p.TicksPerFrame, 1))
		c.tpq = c.smpte / 2 // quarters at 120 BPM for the grid
		return
	}
	c.tpq = float64(max(p.TicksPerQuarter, 1))
	us := float64(defaultUSPerQuarter)
	c.segs = append(c.segs, tempoSeg{tick: 0, sec: 0, secPerTick: us / 1e6 / c.tpq})
	for _, t := range p.Tempos {
		tk := float64(max(t.Tick, 0))
		last := &c.segs[len(c.segs)-1]
		spt := float64(t.USPerQuarter) / 1e6 / c.tpq
		if t.USPerQuarter == 0 {
			spt = last.secPerTick
		}
		if tk <= last.tick {
			last.secPerTick = spt
			continue
		}
		sec := last.sec + (tk-last.tick)*last.secPerTick
		c.segs = append(c.segs, tempoSeg{tick: tk, sec: sec, secPerTick: spt})
	}
}

// seconds at a fractional tick.
func (c *clock) seconds(tick float64) float64 {
	if c.smpte > 0 {
		return tick / c.smpte
	}
	i := c.lastSeg
	if i >= len(c.segs) || c.segs[i].tick > tick || (i+1 < len(c.segs) && c.segs[i+1].tick <= tick) {
		i = sort.Search(len(c.segs), func(j int) bool { return c.segs[j].tick > tick }) - 1
		i = max(i, 0)
		c.lastSeg = i
	}
	s := &c.segs[i]
	return s.sec + (tick-s.tick)*s.secPerTick
}

// usPerQuarterAt is the tempo in effect at tick.
func (c *clock) usPerQuarterAt(tick float64) float64 {
	if c.smpte > 0 {
		return defaultUSPerQuarter
	}
	c.seconds(tick)
	return c.segs[c.lastSeg].secPerTick * c.tpq * 1e6
}

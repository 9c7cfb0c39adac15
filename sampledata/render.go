package sampledata

import (
	"bytes"
	"fmt"
	"slices"
	"sync"

	"gitlab.com/gomidi/midi/v2/smf"
)

// layout is how a piece is written: SMF format, division and message style.
type layout struct {
	format    int   // 0, 1 or 2
	ppq       int64 // metrical division; 0 when SMPTE
	fps       int   // SMPTE frame rate code 24, 25, 29 (30 drop-frame) or 30; 0 when metrical
	tpf       int   // SMPTE ticks per frame
	offVel0   bool  // note-off written as note-on with velocity 0 (SMF 1.0 allows both)
	noRunning bool  // no running status
}

// Wire constants of the messages written (SMF 1.0 and MIDI 1.0).
const (
	statusNoteOff   = 0x80
	statusNoteOn    = 0x90
	statusCC        = 0xB0
	statusProgram   = 0xC0
	metaText        = 0x01
	metaCopyright   = 0x02
	metaTrackName   = 0x03
	metaTempo       = 0x51 // 3 bytes: µs per quarter note
	metaTimeSig     = 0x58 // nn dd cc bb
	metaKeySig      = 0x59 // sf mi
	ccVolume        = 7
	ccPan           = 10
	ccSustain       = 64
	drumChannel     = 9 // channel 10, General MIDI 1
	releaseVelocity = 64
)

// Event ordering at one tick: meta first, then setup, note-offs before note-ons so a
// repeated pitch ends before it starts again.
const (
	prioMeta = iota
	prioSetup
	prioOff
	prioCC
	prioOn
)

type event struct {
	tick   int64
	prio   uint8
	seq    int32 // insertion order, the last sort key, so the order is total
	off, n int32 // the message bytes in the arena
}

// trackBuilder collects one track's events with their bytes in one arena. Builders
// are pooled: a render takes them, and gives them back once the bytes are written.
type trackBuilder struct {
	evs    []event
	arena  []byte
	tr     smf.Track
	keys   []uint64 // sort scratch
	sorted []event  // sort scratch
}

func maxTick(evs []event) int64 {
	var m int64
	for _, e := range evs {
		m = max(m, e.tick)
	}
	return m
}

var builderPool = sync.Pool{New: func() any { return new(trackBuilder) }}

func getBuilder() *trackBuilder {
	tb := builderPool.Get().(*trackBuilder)
	tb.evs, tb.arena, tb.tr = tb.evs[:0], tb.arena[:0], tb.tr[:0]
	return tb
}

// placed is a note in file ticks while overlaps are cut.
type placed struct {
	start, end int64
	part       int
	seq        int // place in the part, the last sort key, so the order is total
	n          note
}

var placedPool = sync.Pool{New: func() any { return new([]placed) }}

func (tb *trackBuilder) add(tick int64, prio uint8, msg ...byte) {
	tb.evs = append(tb.evs, event{tick: tick, prio: prio, seq: int32(len(tb.evs)), off: int32(len(tb.arena)), n: int32(len(msg))})
	tb.arena = append(tb.arena, msg...)
}

// grow makes room for about n more channel events.
func (tb *trackBuilder) grow(n int) {
	tb.evs = slices.Grow(tb.evs, n)
	tb.arena = slices.Grow(tb.arena, 3*n)
}

func (tb *trackBuilder) meta(tick int64, typ byte, data []byte) {
	if len(data) > 127 {
		data = data[:127] // one-byte VLQ length
	}
	tb.evs = append(tb.evs, event{tick: tick, prio: prioMeta, seq: int32(len(tb.evs)), off: int32(len(tb.arena)), n: int32(3 + len(data))})
	tb.arena = append(tb.arena, 0xFF, typ, byte(len(data)))
	tb.arena = append(tb.arena, data...)
}

// track sorts the events and returns them as a closed gomidi track ending at end.
func (tb *trackBuilder) track(end int64) smf.Track {
	// Sort by (tick, prio, insertion order) as one packed key when it fits: a plain
	// integer sort is several times faster than a comparison function.
	if len(tb.evs) < 1<<20 && maxTick(tb.evs) < 1<<38 {
		keys := slices.Grow(tb.keys[:0], len(tb.evs))
		for i, e := range tb.evs {
			keys = append(keys, uint64(e.tick)<<23|uint64(e.prio)<<20|uint64(i))
		}
		slices.Sort(keys)
		sorted := slices.Grow(tb.sorted[:0], len(tb.evs))
		for _, k := range keys {
			sorted = append(sorted, tb.evs[k&(1<<20-1)])
		}
		tb.keys, tb.sorted = keys, tb.evs
		tb.evs = sorted
	} else {
		slices.SortFunc(tb.evs, func(a, b event) int {
			if c := cmpInt(a.tick, b.tick); c != 0 {
				return c
			}
			if a.prio != b.prio {
				return int(a.prio) - int(b.prio)
			}
			return int(a.seq - b.seq)
		})
	}
	tr := slices.Grow(tb.tr[:0], len(tb.evs)+1)
	var last int64
	for _, e := range tb.evs {
		tr = append(tr, smf.Event{Delta: uint32(e.tick - last), Message: smf.Message(tb.arena[e.off : e.off+e.n])})
		last = e.tick
	}
	tr.Close(uint32(max(0, end-last)))
	tb.tr = tr
	return tr
}

// timeConv maps score ticks to file ticks: a rescale for metrical files, the tempo
// map to microseconds and then to frames for SMPTE files. All integer.
func timeConv(s *score, lay layout) func(int64) int64 {
	if lay.fps == 0 {
		if lay.ppq == s.ppq {
			return func(t int64) int64 { return t }
		}
		return func(t int64) int64 { return t * lay.ppq / s.ppq }
	}
	ts := s.tempos
	if len(ts) == 0 || ts[0].tick != 0 {
		ts = append([]tempoAt{{tick: 0, us: 500_000}}, ts...)
	}
	cum := make([]int64, len(ts)) // µs at each tempo change
	for i := 1; i < len(ts); i++ {
		cum[i] = cum[i-1] + (ts[i].tick-ts[i-1].tick)*ts[i-1].us/s.ppq
	}
	num, den := int64(lay.fps*lay.tpf), int64(1_000_000)
	if lay.fps == 29 { // 30 drop-frame runs at 30000/1001 ≈ 29.97 frames per second (SMPTE 12M)
		num, den = int64(30_000*lay.tpf), 1001*1_000_000
	}
	return func(t int64) int64 {
		i, found := slices.BinarySearchFunc(ts, t, func(tc tempoAt, t int64) int { return cmpInt(tc.tick, t) })
		if !found {
			i--
		}
		us := cum[i] + (t-ts[i].tick)*ts[i].us/s.ppq
		return us * num / den
	}
}

// writeScore adds a score's events to tracks: conductor events to meta, each part to
// the builder partTrack returns.
func writeScore(s *score, lay layout, meta *trackBuilder, partTrack func(int) *trackBuilder, text string) int64 {
	conv := timeConv(s, lay)
	if s.title != "" {
		meta.meta(0, metaTrackName, []byte(s.title))
	}
	if text != "" {
		meta.meta(0, metaText, []byte(text))
	}
	for _, m := range s.meters {
		clocks := byte(24) // MIDI clocks per metronome click: a quarter
		switch {
		case m.den == 8 && m.num%3 == 0:
			clocks = 36 // dotted quarter
		case m.den == 8:
			clocks = 12
		}
		meta.meta(conv(m.tick), metaTimeSig, []byte{m.num, denPow(m.den), clocks, 8})
	}
	meta.meta(0, metaKeySig, []byte{byte(s.key.sharps()), boolByte(s.key.minor)})
	if lay.fps == 0 {
		for _, tc := range s.tempos {
			us := tc.us
			meta.meta(conv(tc.tick), metaTempo, []byte{byte(us >> 16), byte(us >> 8), byte(us)})
		}
	}
	end := conv(s.end)
	// Notes per channel and pitch must not overlap (a note-on of a sounding pitch is
	// ambiguous): collect them in file ticks, cut overlaps, then write.
	count := 0
	for _, p := range s.parts {
		count += len(p.notes)
	}
	buf := placedPool.Get().(*[]placed)
	defer placedPool.Put(buf)
	all := slices.Grow((*buf)[:0], count)
	defer func() { *buf = all[:0] }()
	for pi, p := range s.parts {
		for i, n := range p.notes {
			all = append(all, placed{start: conv(n.start), end: conv(n.end), part: pi, seq: i, n: n})
		}
		partTrack(pi).grow(2*len(p.notes) + len(p.ccs) + 4)
	}
	slices.SortFunc(all, func(a, b placed) int {
		ca, cb := s.parts[a.part].channel, s.parts[b.part].channel
		if ca != cb {
			return int(ca) - int(cb)
		}
		if a.n.pitch != b.n.pitch {
			return int(a.n.pitch) - int(b.n.pitch)
		}
		if c := cmpInt(a.start, b.start); c != 0 {
			return c
		}
		if a.part != b.part {
			return a.part - b.part
		}
		return a.seq - b.seq
	})
	for i := 0; i+1 < len(all); i++ {
		a, b := &all[i], &all[i+1]
		if s.parts[a.part].channel == s.parts[b.part].channel && a.n.pitch == b.n.pitch && b.start < a.end {
			a.end = b.start
		}
	}
	for pi, p := range s.parts {
		tb := partTrack(pi)
		if p.name != "" && tb != meta {
			tb.meta(0, metaTrackName, []byte(p.name))
		}
		if !p.drum {
			tb.add(0, prioSetup, statusProgram|p.channel, p.program)
		}
		tb.add(0, prioSetup, statusCC|p.channel, ccVolume, p.volume)
		tb.add(0, prioSetup, statusCC|p.channel, ccPan, p.pan)
		for _, c := range p.ccs {
			tb.add(conv(c.tick), prioCC, statusCC|p.channel, c.num, c.val)
			end = max(end, conv(c.tick))
		}
	}
	for _, pl := range all {
		if pl.end <= pl.start {
			continue // cut to nothing by a later note of the same pitch
		}
		p := s.parts[pl.part]
		tb := partTrack(pl.part)
		tb.add(pl.start, prioOn, statusNoteOn|p.channel, pl.n.pitch, pl.n.vel)
		if lay.offVel0 {
			tb.add(pl.end, prioOff, statusNoteOn|p.channel, pl.n.pitch, 0)
		} else {
			tb.add(pl.end, prioOff, statusNoteOff|p.channel, pl.n.pitch, releaseVelocity)
		}
		end = max(end, pl.end)
	}
	return end
}

func boolByte(b bool) byte {
	if b {
		return 1
	}
	return 0
}

// denPow returns the Time Signature denominator as a power of two (SMF 1.0).
func denPow(den uint8) byte {
	p := byte(0)
	for d := den; d > 1; d >>= 1 {
		p++
	}
	return p
}

// render writes a piece as Standard MIDI File bytes with gomidi's writer.
func render(p *piece) ([]byte, error) {
	lay := p.lay
	var file *smf.SMF
	switch lay.format {
	case 0:
		file = smf.New()
	case 1:
		file = smf.NewSMF1()
	case 2:
		file = smf.NewSMF2()
	default:
		return nil, fmt.Errorf("render %s: format %d", p.slug, lay.format)
	}
	if lay.fps != 0 {
		file.TimeFormat = smf.TimeCode{FramesPerSecond: uint8(lay.fps), SubFrames: uint8(lay.tpf)}
	} else {
		file.TimeFormat = smf.MetricTicks(lay.ppq)
	}
	file.NoRunningStatus = lay.noRunning
	text := corpusText(p.kind)
	var tracks []smf.Track
	var used []*trackBuilder
	get := func() *trackBuilder {
		tb := getBuilder()
		used = append(used, tb)
		return tb
	}
	defer func() {
		for _, tb := range used {
			builderPool.Put(tb)
		}
	}()
	switch lay.format {
	case 0:
		tb := get()
		end := writeScore(p.scores[0], lay, tb, func(int) *trackBuilder { return tb }, text)
		tracks = append(tracks, tb.track(end))
	case 1:
		s := p.scores[0]
		meta := get()
		parts := make([]*trackBuilder, len(s.parts))
		for i := range parts {
			parts[i] = get()
		}
		end := writeScore(s, lay, meta, func(i int) *trackBuilder { return parts[i] }, text)
		tracks = append(tracks, meta.track(end))
		for _, tb := range parts {
			tracks = append(tracks, tb.track(end))
		}
	case 2:
		for i, s := range p.scores {
			tb := get()
			t := ""
			if i == 0 {
				t = text
			}
			end := writeScore(s, lay, tb, func(int) *trackBuilder { return tb }, t)
			tracks = append(tracks, tb.track(end))
		}
	}
	for _, tr := range tracks {
		if err := file.Add(tr); err != nil {
			return nil, fmt.Errorf("render %s: %w", p.slug, err)
		}
	}
	var buf bytes.Buffer
	buf.Grow(4096)
	if _, err := file.WriteTo(&buf); err != nil {
		return nil, fmt.Errorf("render %s: %w", p.slug, err)
	}
	return buf.Bytes(), nil
}

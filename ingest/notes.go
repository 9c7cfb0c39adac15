package ingest

// Note pairing. Notes are paired per (track, channel, pitch):
//   - a note-on with velocity 0 is a note-off (SMF 1.0 / MIDI 1.0);
//   - a note-on of a pitch that is still sounding ends the earlier note at that tick
//     and starts a new one (counted as WarnRetrigger);
//   - a note-off with no sounding note is ignored (WarnOrphanOff);
//   - notes still sounding at the end of their track end there (WarnOpenAtEnd);
//   - zero-length notes are kept (WarnZeroLength).
//
// Sustain pedal (when ParseOptions.Pedal): controller 64 at 64 or more holds, below 64
// releases (MIDI 1.0). The pedal is tracked per (track, channel): a pedal event acts on
// the notes of its own track and channel only, the simplest rule that keeps tracks
// independent (pedal events on another track than their notes are rare in practice).
// A note whose key is released while the pedal is down ends at the pedal release; a
// new note-on of the same pitch ends the held note at once (re-striking a sustained
// key, common practice in performance encodings; not counted as a retrigger). Notes
// held by the pedal at the end of the track end there, without a warning.
//
// Channel mode messages (All Notes Off, CC 123, and the like) do not end notes: files
// use them mostly as resets at the start or end, and the pairs stay comparable with
// other readers (midicsv, gomidi) that report events, not sounding notes. Drum notes
// (channel index 9) are paired like the others.
//
// Program changes are per channel across all tracks of a piece, in time order: each
// note gets the program last set on its channel at or before its start (program
// changes at the note's own tick apply first), General MIDI program 0 before any.

const noKey = 0 // empty slot in the key tables; slots hold note index + 1

// rawNote is a note as paired, before sorting; Parse expands it into a Note with
// seconds and program while merging the tracks. Half the size of a Note, so the
// pairing and merge passes move less memory.
type rawNote struct {
	StartTick, EndTick int64
	Track              int32
	Pitch, Velocity    uint8
	Channel            uint8
}

// pairer pairs the note events of one track into notes appended to buf.
type pairer struct {
	buf     []rawNote
	open    [numChannels * numKeys]int32 // sounding note per (channel, key), index+1
	held    [numChannels * numKeys]int32 // note kept by the pedal per (channel, key), index+1
	nopen   int
	pedal   [numChannels]bool
	pending [numChannels][]int32 // held notes per channel, index+1
	usePed  bool
	track   int

	retrigger, orphanOff, openAtEnd int
}

func (p *pairer) noteOn(ch, key, vel uint8, tick int64) {
	k := int(ch)<<7 | int(key&0x7F)
	if i := p.open[k]; i != noKey {
		p.buf[i-1].EndTick = tick
		p.retrigger++
		p.nopen--
	}
	if i := p.held[k]; i != noKey {
		if p.buf[i-1].EndTick < 0 {
			p.buf[i-1].EndTick = tick
		}
		p.held[k] = noKey
	}
	// Fields are stored one by one: a composite literal is built in a stack temporary
	// and copied with wider loads than its stores, which stalls store forwarding.
	p.buf = append(p.buf, rawNote{})
	n := &p.buf[len(p.buf)-1]
	n.StartTick = tick
	n.EndTick = -1
	n.Pitch = key
	n.Velocity = vel
	n.Channel = ch
	n.Track = int32(p.track)
	p.open[k] = int32(len(p.buf))
	p.nopen++
}

func (p *pairer) noteOff(ch, key uint8, tick int64) {
	k := int(ch)<<7 | int(key&0x7F)
	i := p.open[k]
	if i == noKey {
		p.orphanOff++
		return
	}
	p.open[k] = noKey
	p.nopen--
	if p.usePed && p.pedal[ch] {
		p.held[k] = i
		p.pending[ch] = append(p.pending[ch], i)
		return
	}
	p.buf[i-1].EndTick = tick
}

func (p *pairer) sustain(ch, value uint8, tick int64) {
	if !p.usePed {
		return
	}
	down := value >= pedalDownMin
	if down || !p.pedal[ch] {
		p.pedal[ch] = down
		return
	}
	p.pedal[ch] = false
	p.release(ch, tick)
}

// release ends the notes the pedal holds on channel ch.
func (p *pairer) release(ch uint8, tick int64) {
	for _, i := range p.pending[ch] {
		n := &p.buf[i-1]
		if n.EndTick < 0 {
			n.EndTick = tick
		}
		k := int(ch)<<7 | int(n.Pitch)
		if p.held[k] == i {
			p.held[k] = noKey
		}
	}
	p.pending[ch] = p.pending[ch][:0]
}

// endTrack closes what is still sounding at tick and resets the per-track state.
func (p *pairer) endTrack(tick int64) {
	if p.nopen > 0 {
		for k, i := range p.open {
			if i != noKey {
				p.buf[i-1].EndTick = tick
				p.openAtEnd++
				p.open[k] = noKey
			}
		}
		p.nopen = 0
	}
	for ch := range p.pending {
		if len(p.pending[ch]) > 0 {
			p.release(uint8(ch), tick)
		}
		p.pedal[ch] = false
	}
}

// sortRun puts the notes of one track, which are in StartTick order, in
// (StartTick, Channel, Pitch, EndTick, Velocity) order. Ties at one tick are few
// and short, so an insertion sort is linear in practice.
func sortRun(ns []rawNote) {
	for i := 1; i < len(ns); i++ {
		if !noteLess(&ns[i], &ns[i-1]) {
			continue
		}
		x := ns[i]
		j := i - 1
		for j >= 0 && noteLess(&x, &ns[j]) {
			ns[j+1] = ns[j]
			j--
		}
		ns[j+1] = x
	}
}

func noteLess(a, b *rawNote) bool {
	if a.StartTick != b.StartTick {
		return a.StartTick < b.StartTick
	}
	if a.Track != b.Track {
		return a.Track < b.Track
	}
	if a.Channel != b.Channel {
		return a.Channel < b.Channel
	}
	if a.Pitch != b.Pitch {
		return a.Pitch < b.Pitch
	}
	if a.EndTick != b.EndTick {
		return a.EndTick < b.EndTick
	}
	return a.Velocity < b.Velocity
}

// mergeRuns merges the sorted runs src[bounds[i]:bounds[i+1]], which are in track
// order, into dst (len(dst) == len(src)) by StartTick; ties keep run order, so dst
// is in (StartTick, Track, Channel, Pitch) order. It is a heap merge that moves
// whole stretches of a run at once: the root run may go on while it stays below
// both children of the root. The heap holds each run's next start tick and the run
// index packed in one word, which orders like (tick, run) with one comparison; ticks
// of 2^47 and more (only damaged or contrived files reach them) take mergeRunsWide.
func mergeRuns(dst []Note, src []rawNote, bounds []int, em *emitter) {
	nruns := len(bounds) - 1
	if nruns > maxPackedRuns {
		mergeRunsWide(dst, src, bounds, em)
		return
	}
	var hBuf, endBuf [32]uint64
	var posBuf [32]int
	h, pos, end := hBuf[:0], posBuf[:0], endBuf[:0]
	for i := range nruns {
		a, b := bounds[i], bounds[i+1]
		pos = append(pos, a)
		end = append(end, uint64(b))
		if a == b {
			continue
		}
		if last := src[b-1].StartTick; last < 0 || last >= 1<<(64-packedRunBits) {
			mergeRunsWide(dst, src, bounds, em)
			return
		}
		h = append(h, uint64(src[a].StartTick)<<packedRunBits|uint64(i))
	}
	// runs are appended in run order with arbitrary ticks: heapify
	for i := len(h)/2 - 1; i >= 0; i-- {
		siftDownKeys(h, i)
	}
	out := 0
	for len(h) > 1 {
		run := int(h[0] & (maxPackedRuns - 1))
		// the key to beat: the smaller child of the root
		next := h[1]
		if len(h) > 2 && h[2] < next {
			next = h[2]
		}
		q, e := pos[run], int(end[run])
		for {
			em.put(&dst[out], &src[q])
			out++
			q++
			if q == e || uint64(src[q].StartTick)<<packedRunBits|uint64(run) > next {
				break
			}
		}
		if q == e {
			h[0] = h[len(h)-1]
			h = h[:len(h)-1]
		} else {
			pos[run] = q
			h[0] = uint64(src[q].StartTick)<<packedRunBits | uint64(run)
		}
		siftDownKeys(h, 0)
	}
	if len(h) == 1 {
		run := int(h[0] & (maxPackedRuns - 1))
		for q := pos[run]; q < int(end[run]); q++ {
			em.put(&dst[out], &src[q])
			out++
		}
	}
}

// Packed heap keys of mergeRuns: start tick above, run index in the low bits.
const (
	packedRunBits = 16 // an SMF header declares at most 65,535 tracks
	maxPackedRuns = 1 << packedRunBits
)

// siftDownKeys restores the heap order of h below i.
func siftDownKeys(h []uint64, i int) {
	x := h[i]
	for {
		c := 2*i + 1
		if c >= len(h) {
			break
		}
		if c+1 < len(h) && h[c+1] < h[c] {
			c++
		}
		if h[c] >= x {
			break
		}
		h[i] = h[c]
		i = c
	}
	h[i] = x
}

// mergeRunsWide is mergeRuns for any ticks and number of runs, with a heap of
// (tick, run) pairs.
func mergeRunsWide(dst []Note, src []rawNote, bounds []int, em *emitter) {
	var small [32]runHead
	h := small[:0]
	for i := 0; i+1 < len(bounds); i++ {
		if bounds[i] < bounds[i+1] {
			h = append(h, runHead{tick: src[bounds[i]].StartTick, run: i, pos: bounds[i], end: bounds[i+1]})
		}
	}
	// runs are appended in run order with arbitrary ticks: heapify
	for i := len(h)/2 - 1; i >= 0; i-- {
		siftDown(h, i)
	}
	out := 0
	for len(h) > 1 {
		r := &h[0]
		// the next head to beat: the smaller child of the root
		c := 1
		if len(h) > 2 && h[2].before(&h[1]) {
			c = 2
		}
		next := h[c]
		q := r.pos
		for {
			em.put(&dst[out], &src[q])
			out++
			q++
			if q == r.end {
				break
			}
			t := src[q].StartTick
			if t > next.tick || (t == next.tick && r.run > next.run) {
				break
			}
		}
		if q == r.end {
			h[0] = h[len(h)-1]
			h = h[:len(h)-1]
		} else {
			r.pos = q
			r.tick = src[q].StartTick
		}
		siftDown(h, 0)
	}
	if len(h) == 1 {
		for q := h[0].pos; q < h[0].end; q++ {
			em.put(&dst[out], &src[q])
			out++
		}
	}
}

// runHead is the next unmerged note of one run.
type runHead struct {
	tick          int64
	run, pos, end int
}

func (a *runHead) before(b *runHead) bool {
	return a.tick < b.tick || (a.tick == b.tick && a.run < b.run)
}

func siftDown(h []runHead, i int) {
	for {
		c := 2*i + 1
		if c >= len(h) {
			return
		}
		if c+1 < len(h) && h[c+1].before(&h[c]) {
			c++
		}
		if !h[c].before(&h[i]) {
			return
		}
		h[i], h[c] = h[c], h[i]
		i = c
	}
}

// progChange is one program change, for assigning programs after sorting.
type progChange struct {
	tick    int64
	channel uint8
	program uint8
}

// emitter expands raw notes, in final order, into Notes: seconds through the time
// map (starts are non-decreasing, so a segment cursor follows them), the program in
// effect on the channel (changes in tick order, stable by track) and the drum flag.
// Notes of a chord share their start and often their end: the last start and end
// times are kept, which saves most of the divisions.
type emitter struct {
	tm    *TimeMap
	seg   int
	progs []progChange
	pc    int
	cur   [numChannels]uint8
	zero  int

	started            bool // startTick and startSec hold the last start
	startTick, endTick int64
	startSec, endSec   float64
	ended              bool // endTick and endSec hold the last end
}

func (em *emitter) put(n *Note, r *rawNote) {
	tm := em.tm
	segs := tm.segs
	if !em.started || r.StartTick != em.startTick {
		for em.seg+1 < len(segs) && segs[em.seg+1].tick <= r.StartTick {
			em.seg++
		}
		for em.pc < len(em.progs) && em.progs[em.pc].tick <= r.StartTick {
			c := &em.progs[em.pc]
			em.cur[c.channel&statusChannelMask] = c.program
			em.pc++
		}
		em.started, em.startTick, em.startSec = true, r.StartTick, tm.at(em.seg, r.StartTick)
	}
	switch {
	case r.EndTick == r.StartTick:
		em.zero++
		em.ended, em.endTick, em.endSec = true, r.EndTick, em.startSec
	case !em.ended || r.EndTick != em.endTick:
		e := em.seg
		for e+1 < len(segs) && segs[e+1].tick <= r.EndTick {
			e++
			if e-em.seg > 8 {
				e = tm.segment(r.EndTick)
				break
			}
		}
		em.ended, em.endTick, em.endSec = true, r.EndTick, tm.at(e, r.EndTick)
	}
	ch := r.Channel & statusChannelMask
	// field by field into *n, not through a composite literal (see pairer.noteOn)
	n.StartTick = r.StartTick
	n.EndTick = r.EndTick
	n.Start = em.startSec
	n.End = em.endSec
	n.Pitch = r.Pitch
	n.Velocity = r.Velocity
	n.Channel = ch
	n.Program = em.cur[ch]
	n.Drum = ch == drumChannel
	n.Track = int(r.Track)
}

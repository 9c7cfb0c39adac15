package ingest

import (
	"math"
	"math/bits"
)

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
// Parse uses it only where tickSorter.order declines: on real files, whose runs
// interleave note by note, the heap moves about one note per sift.
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

// tickSorter finds the order of a piece's notes. The notes of the run-ordered buffer
// fall into groups, maximal stretches of one start tick (mostly chords of one
// track); each group gets one key, its tick (less the smallest) above its index,
// and the keys sorted give mergeRuns' order: by StartTick, and groups of one tick
// from different runs in run order. Sorting groups rather than notes halves the keys
// on real files.
//
// The sort scatters the keys into about as many buckets as there are notes by the
// top bits of their tick (one counting pass, one scatter pass, as in an MSD radix
// sort), then an insertion sort fixes the order inside each bucket. Music spreads
// its notes over time, so buckets hold a few keys; when one holds more than
// maxBucketKeys, a bottom-up merge of the per-run stretches of keys is used instead,
// which is O(g log runs) for any input. The scratch slices are kept for the next
// piece.
type tickSorter struct {
	keys, tmp []uint64
	ends      []int32  // group g is src[ends[g]:ends[g+1]]
	counts    []uint32 // per bucket
	stretch   []int    // starts of the ascending stretches of keys, for the merge
}

const (
	maxBucketBits = 16 // at most 65,536 buckets: their counts stay in L2
	maxBucketKeys = 32 // bounds the insertion sort's work per key
)

// order returns the group keys of src, whose runs src[bounds[i]:bounds[i+1]] are
// each sorted by StartTick, in merged order, the group ends and the number of index
// bits under the tick. ok is false when tick range and index do not fit in one word
// together (ticks of 2^40 and more in a big piece, only damaged or contrived files
// reach them), or src is too long for int32 ends: use mergeRuns then.
func (s *tickSorter) order(src []rawNote, bounds []int) (keys []uint64, ends []int32, idxBits uint, ok bool) {
	n := len(src)
	if n == 0 {
		return nil, nil, 0, true
	}
	if n >= math.MaxInt32 {
		return nil, nil, 0, false
	}
	lo, hi := int64(math.MaxInt64), int64(math.MinInt64)
	for i := 0; i+1 < len(bounds); i++ {
		if a, b := bounds[i], bounds[i+1]; a < b {
			lo = min(lo, src[a].StartTick)
			hi = max(hi, src[b-1].StartTick)
		}
	}
	if lo < 0 {
		return nil, nil, 0, false // never from the reader, whose ticks count up from 0
	}
	idxBits = uint(bits.Len(uint(n - 1)))
	tickBits := uint(bits.Len64(uint64(hi - lo)))
	if idxBits+tickBits > 64 {
		return nil, nil, 0, false
	}
	if cap(s.keys) < n {
		c := n + n/4
		s.keys, s.tmp, s.ends = make([]uint64, c), make([]uint64, c), make([]int32, c+1)
	}
	// buckets: the top bits of the tick, about one bucket per note
	bucketBits := min(tickBits, uint(bits.Len(uint(n)))-1, maxBucketBits)
	nb := 1 << bucketBits
	if cap(s.counts) < nb {
		s.counts = make([]uint32, nb, 2*nb)
	}
	counts := s.counts[:nb]
	clear(counts)
	shift := tickBits - bucketBits
	keys, ends = s.keys[:n], s.ends[:n+1]
	src = src[:n]
	// One pass finds the groups, builds their keys and counts the buckets. It is
	// branch-free: every note writes its group's key and end and counts 0 or 1, the
	// last write of a group stays.
	g := 0
	prev := ^uint64(0)
	ends[0] = 0
	for i := range src {
		t := uint64(src[i].StartTick - lo)
		next := boolInt(t != prev)
		prev = t
		g += next
		keys[g-1] = t<<idxBits | uint64(g-1)
		ends[g] = int32(i + 1)
		counts[t>>shift&uint64(nb-1)] += uint32(next)
	}
	keys, ends = keys[:g], ends[:g+1]
	if tickBits == 0 {
		return keys, ends, idxBits, true // one start tick
	}
	// counts to starting offsets
	sum, most := uint32(0), uint32(0)
	for b, k := range counts {
		counts[b] = sum
		sum += k
		most = max(most, k)
	}
	if most > maxBucketKeys {
		return s.merge(keys), ends, idxBits, true
	}
	out := s.tmp[:g]
	shift += idxBits
	for _, k := range keys {
		b := k >> shift & uint64(nb-1)
		out[counts[b]] = k
		counts[b]++
	}
	// insertion sort: keys are out of order only inside a bucket
	for i := 1; i < len(out); i++ {
		x := out[i]
		if x > out[i-1] {
			continue
		}
		j := i - 1
		for j >= 0 && out[j] > x {
			out[j+1] = out[j]
			j--
		}
		out[j+1] = x
	}
	return out, ends, idxBits, true
}

// merge sorts keys, a few ascending stretches (one per run at most), by merging
// neighbouring stretches pairwise until one is left. It returns keys or s.tmp.
func (s *tickSorter) merge(keys []uint64) []uint64 {
	st := append(s.stretch[:0], 0)
	for i := 1; i < len(keys); i++ {
		if keys[i] < keys[i-1] {
			st = append(st, i)
		}
	}
	st = append(st, len(keys))
	from, to := keys, s.tmp[:len(keys)]
	for len(st) > 2 {
		w, i := 0, 0
		for ; i+2 < len(st); i += 2 {
			a, m, b := st[i], st[i+1], st[i+2]
			mergeKeys(to[a:b], from[a:m], from[m:b])
			st[w] = a
			w++
		}
		if i+1 < len(st) {
			// an odd stretch out
			copy(to[st[i]:], from[st[i]:])
			st[w] = st[i]
			w++
		}
		st[w] = len(keys)
		st = st[:w+1]
		from, to = to, from
	}
	s.stretch = st
	return from
}

// mergeKeys merges the ascending a and b into dst (len(dst) == len(a)+len(b)).
func mergeKeys(dst, a, b []uint64) {
	i, j, k := 0, 0, 0
	for i < len(a) && j < len(b) {
		x, y := a[i], b[j]
		v, inc := y, 0
		if x < y { // a conditional move: the outcome is not predictable
			v, inc = x, 1
		}
		dst[k] = v
		k++
		i += inc
		j += 1 - inc
	}
	k += copy(dst[k:], a[i:])
	copy(dst[k:], b[j:])
}

// boolInt is 1 for true, 0 for false; the compiler makes it a flag move.
func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// emitSorted expands src into dst in the order of the group keys and ends from
// tickSorter.order. It is emitter.put with the work of a new start done once per
// group, all of whose notes start at one tick, and the cursor state in locals. With
// em.hashKeys it also packs each note's content hash key there (and keeps the latest
// end in em.maxEnd), so hashing need not read the notes again.
func emitSorted(dst []Note, src []rawNote, keys []uint64, ends []int32, idxBits uint, em *emitter) {
	tm := em.tm
	m := uint64(1)<<idxBits - 1
	seg, zero := em.seg, 0
	hk, maxEnd := em.hashKeys, em.maxEnd
	if hk != nil {
		hk = hk[:len(dst)]
	}
	started, startTick, startSec := em.started, em.startTick, em.startSec
	out := 0
	for _, k := range keys {
		g := k & m
		a, b := int(ends[g]), int(ends[g+1])
		if t := src[a].StartTick; !started || t != startTick {
			seg = tm.forward(seg, t)
			if em.pc < len(em.progs) && em.progs[em.pc].tick <= t {
				em.program(t)
			}
			started, startTick, startSec = true, t, tm.at(seg, t)
		}
		for q := a; q < b; q++ {
			r := &src[q]
			// The end's time is computed for every note, not taken from the last
			// note's when the ends match: whether they match is not predictable, and
			// the divisions of neighbouring notes overlap. tm.at gives the same bits
			// either way.
			zero += boolInt(r.EndTick == startTick)
			endSec := tm.at(tm.near(seg, r.EndTick), r.EndTick)
			ch := r.Channel & statusChannelMask
			n := &dst[out]
			storeNote(n, r, startSec, endSec, ch, em.cur[ch])
			if hk != nil {
				hk[out] = packTicks(r.StartTick, r.EndTick, r.Pitch, ch == drumChannel)
				maxEnd = max(maxEnd, endSec)
			}
			out++
		}
	}
	em.maxEnd = maxEnd
	em.seg, em.zero = seg, em.zero+zero
	em.started, em.startTick, em.startSec = started, startTick, startSec
	em.ended = false // the last end was not kept
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
	// hashKeys, when not nil, receives the content hash key of each note emitSorted
	// writes, at the note's index (len(hashKeys) >= the notes); maxEnd is the latest
	// end in seconds among them.
	hashKeys []noteKey
	maxEnd   float64

	started            bool // startTick and startSec hold the last start
	startTick, endTick int64
	startSec, endSec   float64
	ended              bool // endTick and endSec hold the last end
}

// program applies the program changes at or before tick.
func (em *emitter) program(tick int64) {
	for em.pc < len(em.progs) && em.progs[em.pc].tick <= tick {
		c := &em.progs[em.pc]
		em.cur[c.channel&statusChannelMask] = c.program
		em.pc++
	}
}

func (em *emitter) put(n *Note, r *rawNote) {
	tm := em.tm
	if !em.started || r.StartTick != em.startTick {
		em.seg = tm.forward(em.seg, r.StartTick)
		if em.pc < len(em.progs) && em.progs[em.pc].tick <= r.StartTick {
			em.program(r.StartTick)
		}
		em.started, em.startTick, em.startSec = true, r.StartTick, tm.at(em.seg, r.StartTick)
	}
	switch {
	case r.EndTick == r.StartTick:
		em.zero++
		em.ended, em.endTick, em.endSec = true, r.EndTick, em.startSec
	case !em.ended || r.EndTick != em.endTick:
		em.ended, em.endTick, em.endSec = true, r.EndTick, tm.at(tm.near(em.seg, r.EndTick), r.EndTick)
	}
	ch := r.Channel & statusChannelMask
	storeNote(n, r, em.startSec, em.endSec, ch, em.cur[ch])
}

// storeNote writes a raw note with its times, channel and program into *n, field
// by field, not through a composite literal (see pairer.noteOn).
func storeNote(n *Note, r *rawNote, start, end float64, ch, program uint8) {
	n.StartTick = r.StartTick
	n.EndTick = r.EndTick
	n.Start = start
	n.End = end
	n.Pitch = r.Pitch
	n.Velocity = r.Velocity
	n.Channel = ch
	n.Program = program
	n.Drum = ch == drumChannel
	n.Track = int(r.Track)
}

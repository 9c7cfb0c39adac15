package mutate

import (
	"encoding/binary"
	"fmt"
	"hash/fnv"
	"math/rand/v2"
	"path"
	"strings"
)

// Op names a kind of damage.
type Op string

// The kinds of damage, each applied to every base where it can be.
const (
	// OpTruncateChunk cuts the file at a chunk boundary: where a chunk starts, where
	// its length field starts, where its data starts, where it ends. Every boundary
	// of every chunk is cut at.
	OpTruncateChunk Op = "truncate-chunk"
	// OpTruncateEvent cuts the file inside an event (after its first byte, before its
	// last).
	OpTruncateEvent Op = "truncate-event"
	// OpShortTrack ends a track chunk inside an event, with its length field matching
	// the cut and the chunks after it kept, so the damage is met inside the track.
	OpShortTrack Op = "short-track"
	// OpBitFlip flips one bit, or eight bits at once, at random places.
	OpBitFlip Op = "bit-flip"
	// OpChunkLength changes a chunk's length field by one either way, to zero, or to
	// one byte past the end of the file.
	OpChunkLength Op = "chunk-length"
	// OpHugeLength declares a huge length: a chunk length of 0xFFFFFFFF or 0x7FFFFFFF,
	// or a meta or SysEx length of 0x0FFFFFFF (the largest VLQ) with no bytes behind it.
	OpHugeLength Op = "huge-length"
	// OpVLQ makes a variable-length quantity invalid: five bytes long, or unterminated
	// at the end of its track.
	OpVLQ Op = "vlq"
	// OpRunningStatus misuses running status: a track's first status byte removed (a
	// data byte with no status before it), every status byte of a track but the first
	// removed (the data then read under the wrong status, event lengths shifted), a
	// status removed just after a meta event, or a status replaced by an undefined one.
	OpRunningStatus Op = "running-status"
)

// Ops lists every kind of damage in the order Mutants makes them.
var Ops = []Op{OpTruncateChunk, OpTruncateEvent, OpShortTrack, OpBitFlip, OpChunkLength, OpHugeLength, OpVLQ, OpRunningStatus}

// Base is a valid file to damage. Name is its file name ("tune.mid"); the names of
// the bases of one Corpus call must differ.
type Base struct {
	Name string
	Data []byte
}

// Case is one damaged file.
type Case struct {
	// Name is the base's name with "-<op>-<nnn>" before its extension
	// ("tune-bit-flip-003.mid"), unique within a Corpus.
	Name   string
	Base   string // the base's Name
	Op     Op
	Detail string // what was done and where, e.g. "cut at byte 14 (a chunk boundary)"
	Data   []byte // never the base's bytes, never sharing memory with them
}

// Counts of the randomly placed variants per base.
const (
	eventCuts    = 5
	shortTracks  = 3
	singleFlips  = 6
	multiFlips   = 2
	flipsPerMult = 8
	lengthChunks = 3 // chunks whose length field is varied
)

// Corpus returns the damaged variants of every base, in the order of the bases.
// The same seed and bases give the same cases, byte for byte.
func Corpus(seed uint64, bases []Base) []Case {
	var out []Case
	for _, b := range bases {
		out = append(out, Mutants(seed, b)...)
	}
	return out
}

// Mutants returns the damaged variants of one valid file: one per chunk boundary
// (OpTruncateChunk), and a few of each other Op where the file has what it needs
// (a meta event for a meta length, a channel event for running status). They are
// derived from seed and the base's name only.
func Mutants(seed uint64, b Base) []Case {
	h := fnv.New64a()
	h.Write([]byte(b.Name))
	m := &maker{base: b, rng: rand.New(rand.NewPCG(seed, h.Sum64())), l: walk(b.Data), count: map[Op]int{}}
	m.truncateChunks()
	m.truncateEvents()
	m.shortTracks()
	m.bitFlips()
	m.chunkLengths()
	m.hugeLengths()
	m.vlqs()
	m.runningStatus()
	return m.out
}

type maker struct {
	base  Base
	rng   *rand.Rand
	l     layout
	count map[Op]int
	out   []Case
}

// add records a case unless its bytes equal the base's (a flip or splice that
// happened to change nothing is not damage).
func (m *maker) add(op Op, data []byte, format string, args ...any) {
	if string(data) == string(m.base.Data) {
		return
	}
	ext := path.Ext(m.base.Name)
	stem := strings.TrimSuffix(m.base.Name, ext)
	n := m.count[op]
	m.count[op]++
	m.out = append(m.out, Case{
		Name: fmt.Sprintf("%s-%s-%03d%s", stem, op, n, ext), Base: m.base.Name, Op: op,
		Detail: fmt.Sprintf(format, args...), Data: data,
	})
}

func (m *maker) clone() []byte { return append([]byte(nil), m.base.Data...) }

func (m *maker) truncateChunks() {
	for _, at := range m.l.boundaries(len(m.base.Data)) {
		m.add(OpTruncateChunk, append([]byte(nil), m.base.Data[:at]...), "cut at byte %d (a chunk boundary)", at)
	}
}

// allEvents returns every event of every track with at least two bytes, with its track.
func (m *maker) allEvents(pred func(e event) bool) (evs []event, tracks []int) {
	for t, te := range m.l.events {
		for _, e := range te {
			if e.end-e.start >= 2 && (pred == nil || pred(e)) {
				evs = append(evs, e)
				tracks = append(tracks, t)
			}
		}
	}
	return evs, tracks
}

func (m *maker) truncateEvents() {
	evs, _ := m.allEvents(nil)
	for range min(eventCuts, len(evs)) {
		e := evs[m.rng.IntN(len(evs))]
		at := e.start + 1 + m.rng.IntN(e.end-e.start-1)
		m.add(OpTruncateEvent, append([]byte(nil), m.base.Data[:at]...), "cut at byte %d, inside the event at byte %d", at, e.start)
	}
}

func (m *maker) shortTracks() {
	evs, tracks := m.allEvents(nil)
	for range min(shortTracks, len(evs)) {
		i := m.rng.IntN(len(evs))
		e, c := evs[i], m.l.chunks[m.l.tracks[tracks[i]]]
		at := e.start + 1 + m.rng.IntN(e.end-e.start-1)
		d := m.splice(c, at, c.end-at, nil)
		m.add(OpShortTrack, d, "track %d ends at byte %d, inside the event at byte %d", tracks[i], at, e.start)
	}
}

func (m *maker) bitFlips() {
	if len(m.base.Data) == 0 {
		return
	}
	for range singleFlips {
		d := m.clone()
		at, bit := m.rng.IntN(len(d)), m.rng.IntN(8)
		d[at] ^= 1 << bit
		m.add(OpBitFlip, d, "bit %d of byte %d flipped", bit, at)
	}
	for range multiFlips {
		d := m.clone()
		var where []string
		for range flipsPerMult {
			at, bit := m.rng.IntN(len(d)), m.rng.IntN(8)
			d[at] ^= 1 << bit
			where = append(where, fmt.Sprintf("%d.%d", at, bit))
		}
		m.add(OpBitFlip, d, "%d bits flipped (byte.bit): %s", flipsPerMult, strings.Join(where, " "))
	}
}

// smfChunks returns the indexes of the SMF chunks whose length field is whole.
func (m *maker) smfChunks() []int {
	var out []int
	for i, c := range m.l.chunks {
		if c.smf {
			out = append(out, i)
		}
	}
	return out
}

func (m *maker) chunkLengths() {
	cs := m.smfChunks()
	// The header chunk always, then random others.
	picked := cs[:min(1, len(cs))]
	rest := append([]int(nil), cs[len(picked):]...)
	m.rng.Shuffle(len(rest), func(i, j int) { rest[i], rest[j] = rest[j], rest[i] })
	picked = append(picked, rest[:min(lengthChunks-len(picked), len(rest))]...)
	for _, ci := range picked {
		c := m.l.chunks[ci]
		n := uint32(c.end - c.body)
		past := uint32(len(m.base.Data) - c.body + 1)
		for _, v := range []struct {
			n    uint32
			what string
		}{{n - 1, "one short"}, {n + 1, "one long"}, {0, "zero"}, {past, "one byte past the end of the file"}} {
			d := m.clone()
			binary.BigEndian.PutUint32(d[c.start+4:], v.n)
			m.add(OpChunkLength, d, "length of the chunk at byte %d set to %d (%s)", c.start, v.n, v.what)
		}
	}
}

func (m *maker) hugeLengths() {
	cs := m.smfChunks()
	if len(cs) > 0 {
		c := m.l.chunks[cs[0]]
		d := m.clone()
		binary.BigEndian.PutUint32(d[c.start+4:], 0x7FFFFFFF)
		m.add(OpHugeLength, d, "header chunk length 0x7FFFFFFF")
	}
	if len(m.l.tracks) > 0 {
		t := m.rng.IntN(len(m.l.tracks))
		c := m.l.chunks[m.l.tracks[t]]
		d := m.clone()
		binary.BigEndian.PutUint32(d[c.start+4:], 0xFFFFFFFF)
		m.add(OpHugeLength, d, "track %d chunk length 0xFFFFFFFF", t)
	}
	huge := []byte{0xFF, 0xFF, 0xFF, 0x7F} // 0x0FFFFFFF, SMF 1.0's largest VLQ
	if evs, tracks := m.allEvents(func(e event) bool { return e.kind == metaStatus }); len(evs) > 0 {
		i := m.rng.IntN(len(evs))
		e, c := evs[i], m.l.chunks[m.l.tracks[tracks[i]]]
		d := m.splice(c, e.lenAt, e.lenEnd-e.lenAt, huge)
		m.add(OpHugeLength, d, "meta event at byte %d declares 0x0FFFFFFF bytes", e.start)
	}
	if len(m.l.tracks) > 0 {
		t := m.rng.IntN(len(m.l.tracks))
		c := m.l.chunks[m.l.tracks[t]]
		sysex := append([]byte{0x00, sysExStatus}, huge...)
		d := m.splice(c, c.body, 0, sysex)
		m.add(OpHugeLength, d, "SysEx declaring 0x0FFFFFFF bytes at the start of track %d", t)
	}
}

func (m *maker) vlqs() {
	five := []byte{0x81, 0x81, 0x81, 0x81, 0x00} // five bytes: SMF 1.0 allows four
	if evs, tracks := m.allEvents(nil); len(evs) > 0 {
		i := m.rng.IntN(len(evs))
		e, c := evs[i], m.l.chunks[m.l.tracks[tracks[i]]]
		d := m.splice(c, e.start, e.delta-e.start, five)
		m.add(OpVLQ, d, "five-byte delta time at byte %d", e.start)
	}
	if evs, tracks := m.allEvents(func(e event) bool { return e.lenAt >= 0 }); len(evs) > 0 {
		i := m.rng.IntN(len(evs))
		e, c := evs[i], m.l.chunks[m.l.tracks[tracks[i]]]
		d := m.splice(c, e.lenAt, e.lenEnd-e.lenAt, five)
		m.add(OpVLQ, d, "five-byte length at byte %d", e.lenAt)
	}
	if evs, tracks := m.allEvents(nil); len(evs) > 0 {
		i := m.rng.IntN(len(evs))
		e, c := evs[i], m.l.chunks[m.l.tracks[tracks[i]]]
		// The track ends in continuation bytes: a delta time that never ends.
		d := m.splice(c, e.start, c.end-e.start, []byte{0x80, 0x80})
		m.add(OpVLQ, d, "track %d ends in an unterminated delta time at byte %d", tracks[i], e.start)
	}
}

func (m *maker) runningStatus() {
	isChannel := func(e event) bool { return e.kind < 0xF0 && e.status >= 0 }
	for t, te := range m.l.events {
		c := m.l.chunks[m.l.tracks[t]]
		for _, e := range te {
			if e.kind < 0xF0 {
				if e.status >= 0 {
					d := m.splice(c, e.status, 1, nil)
					m.add(OpRunningStatus, d, "first status byte of track %d (byte %d) removed", t, e.status)
				}
				break
			}
		}
	}
	if len(m.l.tracks) > 0 {
		// Deep misuse: the track with the most explicit channel statuses keeps only its first.
		best, bestN := -1, 1
		for t, te := range m.l.events {
			n := 0
			for _, e := range te {
				if isChannel(e) {
					n++
				}
			}
			if n > bestN {
				best, bestN = t, n
			}
		}
		if best >= 0 {
			c := m.l.chunks[m.l.tracks[best]]
			d := m.clone()
			removed := 0
			// From the end, so the offsets before each removal stay valid.
			te := m.l.events[best]
			var keep int
			for _, e := range te {
				if isChannel(e) {
					keep = e.status
					break
				}
			}
			for i := len(te) - 1; i >= 0; i-- {
				e := te[i]
				if !isChannel(e) || e.status == keep {
					continue
				}
				d = append(d[:e.status], d[e.status+1:]...)
				removed++
			}
			n := binary.BigEndian.Uint32(d[c.start+4:])
			binary.BigEndian.PutUint32(d[c.start+4:], n-uint32(removed))
			m.fixRIFF(d, -removed)
			m.add(OpRunningStatus, d, "%d status bytes of track %d removed, all but the first", removed, best)
		}
	}
	// A status removed just after a meta event (SMF 1.0: meta and SysEx events cancel
	// running status), and a status replaced by an undefined one.
	var afterMeta []event
	var afterTracks []int
	for t, te := range m.l.events {
		for i := 1; i < len(te); i++ {
			if te[i-1].kind == metaStatus && isChannel(te[i]) {
				afterMeta = append(afterMeta, te[i])
				afterTracks = append(afterTracks, t)
			}
		}
	}
	if len(afterMeta) > 0 {
		i := m.rng.IntN(len(afterMeta))
		e, c := afterMeta[i], m.l.chunks[m.l.tracks[afterTracks[i]]]
		d := m.splice(c, e.status, 1, nil)
		m.add(OpRunningStatus, d, "status byte after a meta event (byte %d) removed", e.status)
	}
	if evs, _ := m.allEvents(isChannel); len(evs) > 0 {
		e := evs[m.rng.IntN(len(evs))]
		d := m.clone()
		d[e.status] = 0xF4 // an undefined System Common status in MIDI 1.0 (from memory; 0xF5 is the other)
		m.add(OpRunningStatus, d, "status at byte %d replaced by the undefined 0xF4", e.status)
	}
}

// splice replaces del bytes at offset at (inside chunk c) by ins, and corrects the
// length fields of c and, in a RIFF file, of the RIFF form and its data chunk, so that
// the splice is the only damage.
func (m *maker) splice(c chunk, at, del int, ins []byte) []byte {
	src := m.base.Data
	d := make([]byte, 0, len(src)-del+len(ins))
	d = append(d, src[:at]...)
	d = append(d, ins...)
	d = append(d, src[at+del:]...)
	diff := len(ins) - del
	n := binary.BigEndian.Uint32(d[c.start+4:])
	binary.BigEndian.PutUint32(d[c.start+4:], uint32(int64(n)+int64(diff)))
	m.fixRIFF(d, diff)
	return d
}

// fixRIFF adds diff to the RIFF size fields of d when the base is RIFF-wrapped.
func (m *maker) fixRIFF(d []byte, diff int) {
	if m.l.riffData < 0 {
		return
	}
	for _, at := range []int{4, m.l.riffData + 4} {
		n := binary.LittleEndian.Uint32(d[at:])
		binary.LittleEndian.PutUint32(d[at:], uint32(int64(n)+int64(diff)))
	}
}

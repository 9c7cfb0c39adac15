package mutate

import (
	"encoding/binary"
	"slices"
)

// Wire facts of the formats walked here: SMF 1.0 ("Standard MIDI Files 1.0", MIDI
// Manufacturers Association) and its RIFF RMID wrapping (Microsoft Multimedia
// Programming Interface and Data Specifications 1.0).
const (
	chunkHeader = 8    // 4-byte id + 4-byte length (big-endian in SMF, little-endian in RIFF)
	riffHeader  = 12   // "RIFF" <u32le size> "RMID"
	metaStatus  = 0xFF // FF <type> <len> <bytes>
	sysExStatus = 0xF0 // F0 <len> <bytes>
	escStatus   = 0xF7 // F7 <len> <bytes>
)

// chunk is one chunk of a file; offsets are absolute in the file.
type chunk struct {
	start int  // offset of the 4-byte id
	body  int  // start + 8
	end   int  // body + declared length, clipped to the file
	track bool // an SMF "MTrk" chunk
	smf   bool // an SMF chunk ("MThd", "MTrk" or unknown), not a RIFF one
}

// event is one event of a track; offsets are absolute in the file.
type event struct {
	start  int  // first byte of the delta-time VLQ
	delta  int  // end of the delta-time VLQ
	status int  // offset of the status byte, -1 under running status
	kind   byte // the status in effect (0xFF meta, 0xF0/0xF7 SysEx, else a channel status)
	lenAt  int  // offset of the length VLQ of a meta or SysEx event, -1 otherwise
	lenEnd int  // end of that length VLQ
	end    int  // one past the last byte
}

// layout is what the walker found in a valid file.
type layout struct {
	riffData int       // offset of the RIFF "data" chunk's id, -1 for a bare SMF
	chunks   []chunk   // in file order: the RIFF chunks, then the SMF chunks
	events   [][]event // per SMF track chunk, in the order of tracks
	tracks   []int     // index in chunks of each SMF track chunk
}

// walk finds the chunks and events of a file. It is lenient and stops at the first
// thing it does not understand: it only needs to find the places to damage in files
// that are valid.
func walk(d []byte) layout {
	l := layout{riffData: -1}
	smfStart, smfEnd := 0, len(d)
	if len(d) >= riffHeader && string(d[:4]) == "RIFF" && string(d[8:12]) == "RMID" {
		for p := riffHeader; p+chunkHeader <= len(d); {
			n := int(binary.LittleEndian.Uint32(d[p+4:]))
			end := min(p+chunkHeader+n, len(d))
			l.chunks = append(l.chunks, chunk{start: p, body: p + chunkHeader, end: end})
			if string(d[p:p+4]) == "data" {
				l.riffData = p
				smfStart, smfEnd = p+chunkHeader, end
				break
			}
			p = end + n&1
		}
		if l.riffData < 0 {
			return l
		}
	}
	for p := smfStart; p+chunkHeader <= smfEnd; {
		n := int(binary.BigEndian.Uint32(d[p+4:]))
		end := smfEnd
		if n <= smfEnd-p-chunkHeader {
			end = p + chunkHeader + n
		}
		c := chunk{start: p, body: p + chunkHeader, end: end, track: string(d[p:p+4]) == "MTrk", smf: true}
		l.chunks = append(l.chunks, c)
		if c.track {
			l.tracks = append(l.tracks, len(l.chunks)-1)
			l.events = append(l.events, walkTrack(d, c.body, c.end))
		}
		p = end
	}
	return l
}

// walkTrack lists the events of a track body d[p:end].
func walkTrack(d []byte, p, end int) []event {
	var evs []event
	var running byte
	for p < end {
		e := event{start: p, status: -1, lenAt: -1, lenEnd: -1}
		q, ok := skipVLQ(d, p, end)
		if !ok || q >= end {
			break
		}
		e.delta = q
		s := d[q]
		if s&0x80 != 0 {
			e.status = q
			q++
			if s < 0xF0 {
				running = s
			}
		} else if running == 0 {
			break
		} else {
			s = running
		}
		e.kind = s
		switch {
		case s < 0xF0:
			q += 2
			if t := s & 0xF0; t == 0xC0 || t == 0xD0 {
				q-- // program change and channel pressure carry one data byte
			}
		case s == sysExStatus || s == escStatus || s == metaStatus:
			if s == metaStatus {
				q++ // meta type
			}
			e.lenAt = q
			v, r, ok := readVLQ(d, q, end)
			if !ok {
				return evs
			}
			e.lenEnd = r
			q = r + v
		default:
			return evs
		}
		if q > end {
			break
		}
		e.end = q
		evs = append(evs, e)
		p = q
	}
	return evs
}

// skipVLQ returns the end of the VLQ at d[p:], at most four bytes long.
func skipVLQ(d []byte, p, end int) (int, bool) {
	_, q, ok := readVLQ(d, p, end)
	return q, ok
}

// readVLQ decodes the VLQ at d[p:] (SMF 1.0: 7 bits per byte, top bit set on all but
// the last, at most four bytes).
func readVLQ(d []byte, p, end int) (v, q int, ok bool) {
	for i := 0; i < 4 && p+i < end; i++ {
		b := d[p+i]
		v = v<<7 | int(b&0x7F)
		if b&0x80 == 0 {
			return v, p + i + 1, true
		}
	}
	return 0, p, false
}

// boundaries returns the offsets strictly inside the file where a chunk starts, its
// length field starts, its data starts or it ends, sorted and without repeats.
func (l *layout) boundaries(size int) []int {
	seen := map[int]bool{}
	var out []int
	add := func(o int) {
		if o > 0 && o < size && !seen[o] {
			seen[o] = true
			out = append(out, o)
		}
	}
	if l.riffData >= 0 {
		add(4)
		add(8)
		add(riffHeader)
	}
	for _, c := range l.chunks {
		add(c.start)
		add(c.start + 4)
		add(c.body)
		add(c.end)
	}
	slices.Sort(out)
	return out
}

package ingest

import "encoding/binary"

// Header is the decoded MThd chunk of a Standard MIDI File.
type Header struct {
	Format   int    // 0, 1 or 2
	Tracks   int    // number of track chunks the header declares
	Division uint16 // the raw division word
	// TicksPerQuarter is the metrical resolution; 0 for SMPTE division.
	TicksPerQuarter int
	// FPS is the SMPTE frame rate (24, 25, 29.97 or 30); 0 for metrical division.
	FPS float64
	// TicksPerFrame is the SMPTE subframe resolution; 0 for metrical division.
	TicksPerFrame int
}

// EventKind says which of the three SMF event families an Event belongs to.
type EventKind uint8

// Event kinds.
const (
	KindChannel EventKind = iota + 1 // a MIDI channel message (note, controller, program, ...)
	KindSysEx                        // F0 <len> <data>
	KindEscape                       // F7 <len> <data>: SysEx continuation or escaped bytes
	KindMeta                         // FF <type> <len> <data>
)

// Event is one track event as read by Reader. Data aliases the input bytes; it is
// valid as long as the input is and must not be modified.
type Event struct {
	Tick   int64     // absolute tick from the start of the track
	Delta  uint32    // delta time before the event
	Offset int64     // byte offset of the event's status byte (or first data byte under running status) in the file
	Kind   EventKind // event family
	// Status is the channel status byte (type | channel) for channel messages, F0, F7
	// or FF otherwise. Running status is resolved: Status is always a status byte.
	Status byte
	Data1  byte   // first data byte of a channel message
	Data2  byte   // second data byte of a channel message (0 for program and channel pressure)
	Meta   byte   // meta event type (KindMeta only)
	Data   []byte // payload of SysEx, escape and meta events
}

// Type returns the message type nibble of a channel event (0x80 note-off ... 0xE0 pitch bend).
func (e *Event) Type() byte { return e.Status & statusTypeMask }

// Channel returns the channel 0-15 of a channel event.
func (e *Event) Channel() uint8 { return e.Status & statusChannelMask }

// Reader walks the events of a Standard MIDI File held in memory, track by track,
// in one pass and without allocating. Every length in the file is checked against
// the bytes that remain before it is used; variable-length quantities longer than
// four bytes, data bytes with no running status, SysEx messages left open at the end
// of a track, events crossing the end of their chunk and tracks over the event cap
// are errors (a *ParseError naming file, track and byte offset).
//
//	r, err := NewReader("a.mid", data, 0)
//	for r.NextTrack() {
//		for r.Next() {
//			ev := r.Event()
//			...
//		}
//	}
//	if err := r.Err(); err != nil { ... }
//
// Policies beyond the letter of SMF 1.0, chosen for real corpora:
//   - running status starts afresh in every track;
//   - running status that continues across a meta or SysEx event (which SMF 1.0 says
//     cancel it) is accepted and counted in RunningAfterMeta;
//   - bytes after End of Track inside a chunk are skipped (counted in SlackBytes), a track
//     ending without End of Track is accepted (counted in MissingEOT);
//   - chunks of unknown type are skipped; bytes after the last declared track are ignored
//     (TrailingBytes).
type Reader struct {
	name      string
	data      []byte // the SMF bytes (inside a RIFF wrapper, if any)
	base      int64  // offset of data[0] in the file, for error offsets
	hdr       Header
	maxEvents int

	pos      int // next unread byte
	end      int // end of the current track chunk
	track    int // index of the current track, -1 before the first
	inTrack  bool
	eot      bool
	running  byte
	cancel   bool // a meta or SysEx event came after the last channel status
	sysexAt  int  // offset of an F0 SysEx still waiting for its F7, -1 if none
	tick     int64
	events   int
	ev       Event
	err      error
	doneAll  bool
	chunkEnd int // end of the last track chunk read

	// RunningAfterMeta counts running-status events right after a meta or SysEx event.
	RunningAfterMeta int
	// SlackBytes counts bytes after End of Track inside track chunks, SlackTracks the
	// tracks that had some.
	SlackBytes, SlackTracks int
	// MissingEOT counts tracks that ended without an End of Track event.
	MissingEOT int
	// SkippedChunks counts chunks of unknown type.
	SkippedChunks int
}

// NewReader reads the header of data, a whole SMF or RIFF RMID file, and returns a
// Reader positioned before the first track. name is used in errors. maxEvents caps
// the events of one track (0: 4,000,000).
func NewReader(name string, data []byte, maxEvents int) (*Reader, error) {
	r := new(Reader)
	if err := r.Reset(name, data, maxEvents); err != nil {
		return nil, err
	}
	return r, nil
}

// Reset makes r read data from the start, like NewReader, reusing r.
func (r *Reader) Reset(name string, data []byte, maxEvents int) error {
	if maxEvents <= 0 {
		maxEvents = defaultMaxEventsPerTrack
	}
	*r = Reader{name: name, maxEvents: maxEvents, track: -1, sysexAt: -1}
	smf, base, err := unwrapRIFF(data)
	if err != nil {
		r.err = r.fail(-1, int(base), err)
		return r.err
	}
	r.data, r.base = smf, base
	if err := r.readHeader(); err != nil {
		r.err = err
		return err
	}
	return nil
}

// Header returns the decoded header.
func (r *Reader) Header() Header { return r.hdr }

// Track returns the index of the current track (the n-th MTrk chunk, from 0).
func (r *Reader) Track() int { return r.track }

// Tick returns the absolute tick of the last event read in the current track.
func (r *Reader) Tick() int64 { return r.tick }

// Event returns the event read by the last successful Next. The pointer stays the
// same for the life of the Reader; its contents change with every Next.
func (r *Reader) Event() *Event { return &r.ev }

// Err returns the first error met, or nil.
func (r *Reader) Err() error { return r.err }

// TrailingBytes returns the number of bytes after the last declared track; valid
// once NextTrack has returned false without error.
func (r *Reader) TrailingBytes() int {
	if !r.doneAll {
		return 0
	}
	return len(r.data) - r.chunkEnd
}

// SMFEnd returns the offset in the file just past the last declared track chunk;
// valid once NextTrack has returned false without error.
func (r *Reader) SMFEnd() int64 { return r.base + int64(r.chunkEnd) }

// fail builds a positional error. It is kept out of line so that the many error
// paths of Next stay small.
//
//go:noinline
func (r *Reader) fail(track, off int, err error) error {
	return &ParseError{File: r.name, Track: track, Offset: r.base + int64(off), Err: err}
}

func (r *Reader) readHeader() error {
	d := r.data
	if len(d) == 0 {
		// common in scraped corpora (failed downloads), and worth its own reason
		return r.fail(-1, 0, ErrEmpty)
	}
	if len(d) < 4 {
		if string(d) != "MThd"[:len(d)] {
			return r.fail(-1, 0, ErrBadMagic)
		}
		return r.fail(-1, len(d), ErrTruncated)
	}
	if binary.BigEndian.Uint32(d) != idMThd {
		return r.fail(-1, 0, ErrBadMagic)
	}
	if len(d) < chunkHeaderLen {
		return r.fail(-1, len(d), ErrTruncated)
	}
	n := binary.BigEndian.Uint32(d[4:])
	if n < mthdDataLen {
		return r.fail(-1, 4, errorf(ErrBadHeader, "header length %d, want at least %d", n, mthdDataLen))
	}
	if uint64(n) > uint64(len(d)-chunkHeaderLen) {
		if len(d)-chunkHeaderLen < mthdDataLen {
			return r.fail(-1, len(d), ErrTruncated)
		}
		return r.fail(-1, 4, errorf(ErrChunkLength, "header length %d, %d bytes remain", n, len(d)-chunkHeaderLen))
	}
	h := d[chunkHeaderLen:]
	format := int(binary.BigEndian.Uint16(h))
	tracks := int(binary.BigEndian.Uint16(h[2:]))
	div := binary.BigEndian.Uint16(h[4:])
	if format > format2 {
		return r.fail(-1, chunkHeaderLen, errorf(ErrBadHeader, "format %d", format))
	}
	if tracks == 0 {
		return r.fail(-1, chunkHeaderLen+2, ErrNoTracks)
	}
	r.hdr = Header{Format: format, Tracks: tracks, Division: div}
	if div&divisionSMPTE == 0 {
		if div == 0 {
			return r.fail(-1, chunkHeaderLen+4, ErrZeroDivision)
		}
		r.hdr.TicksPerQuarter = int(div)
	} else {
		code := -int(int8(div >> 8))
		switch code {
		case 24, 25, 30:
			r.hdr.FPS = float64(code)
		case smpteDropCode:
			r.hdr.FPS = smpteDropFPS
		default:
			return r.fail(-1, chunkHeaderLen+4, errorf(ErrBadHeader, "SMPTE frame code %d, want 24, 25, 29 or 30", code))
		}
		r.hdr.TicksPerFrame = int(div & 0xFF)
		if r.hdr.TicksPerFrame == 0 {
			return r.fail(-1, chunkHeaderLen+5, ErrZeroDivision)
		}
	}
	r.pos = chunkHeaderLen + int(n)
	r.chunkEnd = r.pos
	return nil
}

// NextTrack advances to the next track chunk, skipping any chunks of unknown type
// and the rest of the current track (unchecked when Next has not yet returned
// false). It returns false after the last declared track or on error (see Err).
func (r *Reader) NextTrack() bool {
	if r.err != nil || r.doneAll {
		return false
	}
	if r.inTrack {
		if !r.eot && r.pos < r.chunkEnd {
			// the caller skips the rest of the track: no end-of-track checks
			r.inTrack = false
			r.pos = r.chunkEnd
		} else {
			r.finishTrack()
		}
		if r.err != nil {
			return false
		}
	}
	r.end = 0
	if r.track+1 >= r.hdr.Tracks {
		r.doneAll = true
		return false
	}
	d := r.data
	for {
		p := r.pos
		if len(d)-p < chunkHeaderLen {
			return r.stop(r.fail(r.track+1, len(d), errorf(ErrTruncated, "header declares %d tracks, file ends after %d", r.hdr.Tracks, r.track+1)))
		}
		id := binary.BigEndian.Uint32(d[p:])
		n := binary.BigEndian.Uint32(d[p+4:])
		if uint64(n) > uint64(len(d)-p-chunkHeaderLen) {
			return r.stop(r.fail(r.track+1, p+4, errorf(ErrChunkLength, "chunk length %d, %d bytes remain", n, len(d)-p-chunkHeaderLen)))
		}
		r.pos = p + chunkHeaderLen
		end := r.pos + int(n)
		if id != idMTrk {
			r.SkippedChunks++
			r.pos = end
			continue
		}
		r.track++
		r.end = end
		r.chunkEnd = end
		r.inTrack = true
		r.eot = false
		r.running = 0
		r.cancel = false
		r.sysexAt = -1
		r.tick = 0
		r.events = 0
		return true
	}
}

// finishTrack checks the state at the end of a track and moves past its chunk.
func (r *Reader) finishTrack() {
	r.inTrack = false
	if r.sysexAt >= 0 {
		r.stop(r.fail(r.track, r.sysexAt, errorf(ErrUnterminatedSysEx, "SysEx not ended by F7 before end of track")))
		return
	}
	if r.eot {
		if r.chunkEnd > r.pos {
			r.SlackBytes += r.chunkEnd - r.pos
			r.SlackTracks++
		}
	} else {
		r.MissingEOT++
	}
	r.pos = r.chunkEnd
	r.end = r.pos
}

// stop records err and makes Next and NextTrack return false from now on.
//
//go:noinline
func (r *Reader) stop(err error) bool {
	r.err = err
	r.end = 0
	return false
}

// Next reads the next event of the current track. It returns false at the end of
// the track (after End of Track, or at the end of the chunk) or on error.
func (r *Reader) Next() bool {
	p, end := r.pos, r.end
	if p >= end {
		// end of chunk, after End of Track, after an error or outside a track
		if r.inTrack && !r.eot && r.err == nil {
			r.finishTrack()
		}
		return false
	}
	if r.events >= r.maxEvents {
		return r.stop(r.fail(r.track, p, errorf(ErrTooManyEvents, "more than %d events in one track", r.maxEvents)))
	}
	d := r.data[:end] // len(d) is the end of the chunk: lets the compiler drop bounds checks
	// delta time; one byte in the common case
	vstart := p
	delta := uint32(d[p])
	p++
	if delta >= vlqMore {
		delta &^= vlqMore
		for i := 1; ; i++ {
			if p >= len(d) {
				return r.stop(r.fail(r.track, vstart, errorf(ErrTruncated, "delta time runs past end of track chunk")))
			}
			b := d[p]
			p++
			delta = delta<<7 | uint32(b&^vlqMore)
			if b < vlqMore {
				break
			}
			if i == vlqMaxBytes-1 {
				return r.stop(r.fail(r.track, vstart, errorf(ErrBadVLQ, "delta time longer than %d bytes", vlqMaxBytes)))
			}
		}
	}
	if p >= len(d) {
		return r.stop(r.fail(r.track, p, errorf(ErrTruncated, "event missing after delta time")))
	}
	ev := &r.ev
	ev.Offset = r.base + int64(p)
	ev.Delta = delta
	r.tick += int64(delta)
	ev.Tick = r.tick
	status := d[p]
	if status < statusBit {
		if r.running == 0 {
			return r.stop(r.fail(r.track, p, ErrRunningStatus))
		}
		if r.cancel {
			r.RunningAfterMeta++
			r.cancel = false
		}
		status = r.running
	} else {
		p++
	}
	switch {
	case status < statusSysEx:
		r.running = status
		if r.cancel {
			r.cancel = false
		}
		typ := status & statusTypeMask
		if typ == statusProgram || typ == statusChanTouch {
			if len(d)-p < 1 {
				return r.stop(r.fail(r.track, int(ev.Offset-r.base), errorf(ErrTruncated, "channel message runs past end of track chunk")))
			}
			d1 := d[p]
			if d1 >= statusBit {
				return r.stop(r.fail(r.track, p, errorf(ErrBadData, "status byte %02X where a data byte belongs", d1)))
			}
			ev.Data1, ev.Data2 = d1, 0
			p++
		} else {
			if len(d)-p < 2 {
				return r.stop(r.fail(r.track, int(ev.Offset-r.base), errorf(ErrTruncated, "channel message runs past end of track chunk")))
			}
			d1, d2 := d[p], d[p+1]
			if (d1|d2)&statusBit != 0 {
				bad, at := d1, p
				if d1 < statusBit {
					bad, at = d2, p+1
				}
				return r.stop(r.fail(r.track, at, errorf(ErrBadData, "status byte %02X where a data byte belongs", bad)))
			}
			ev.Data1, ev.Data2 = d1, d2
			p += 2
		}
		ev.Kind = KindChannel
		ev.Status = status
		ev.Meta = 0
		if ev.Data != nil {
			ev.Data = nil
		}
	case status == statusSysEx || status == statusEscape:
		n, q, ok := r.length(p, len(d))
		if !ok {
			return false
		}
		ev.Kind = KindSysEx
		if status == statusEscape {
			ev.Kind = KindEscape
		}
		ev.Status = status
		ev.Meta = 0
		ev.Data1, ev.Data2 = 0, 0
		ev.Data = d[q : q+n : q+n]
		p = q + n
		terminated := n > 0 && d[q+n-1] == sysExEnd
		if status == statusSysEx {
			if r.sysexAt >= 0 {
				return r.stop(r.fail(r.track, r.sysexAt, errorf(ErrUnterminatedSysEx, "SysEx not ended by F7 before the next SysEx")))
			}
			if !terminated {
				r.sysexAt = int(ev.Offset - r.base)
			}
		} else if r.sysexAt >= 0 && terminated {
			r.sysexAt = -1
		}
		r.cancel = true
	case status == statusMeta:
		if p >= len(d) {
			return r.stop(r.fail(r.track, int(ev.Offset-r.base), errorf(ErrTruncated, "meta event runs past end of track chunk")))
		}
		typ := d[p]
		n, q, ok := r.length(p+1, len(d))
		if !ok {
			return false
		}
		ev.Kind = KindMeta
		ev.Status = status
		ev.Meta = typ
		ev.Data1, ev.Data2 = 0, 0
		ev.Data = d[q : q+n : q+n]
		p = q + n
		r.cancel = true
		if typ == metaEndOfTrack {
			r.eot = true
			r.pos = p
			r.end = p // Next returns false from now on; finishTrack counts the rest
			r.events++
			return true
		}
	default:
		return r.stop(r.fail(r.track, int(ev.Offset-r.base), errorf(ErrBadStatus, "status byte %02X is not allowed in a track", status)))
	}
	r.pos = p
	r.events++
	return true
}

// chanMsg is one channel message read by Reader.channelRun.
type chanMsg struct {
	tick           int64 // absolute tick
	status, d1, d2 byte  // running status resolved; d2 is 0 for one-data-byte messages
}

// channelRun is Next for a run of the common event, a channel message after a delta
// time of one or two bytes, wholly inside the chunk: it appends the messages that
// come next in the current track to buf, up to its capacity, without filling Event,
// and stops before anything else, every error included, for Next to read. The
// Reader's state after it is what Next would leave after those events. The run's
// state stays in registers, which makes it the fast path of Parse.
func (r *Reader) channelRun(buf []chanMsg) []chanMsg {
	d := r.data[:r.end]
	p, tick, running, cancel, events := r.pos, r.tick, r.running, r.cancel, r.events
	// five bytes: the longest event taken here (two delta bytes, status, two data bytes)
	for len(buf) < cap(buf) && len(d)-p >= 5 && events < r.maxEvents {
		q := p
		delta := uint32(d[q])
		q++
		if delta >= vlqMore {
			b := d[q]
			if b >= vlqMore {
				break
			}
			delta = (delta&^vlqMore)<<7 | uint32(b)
			q++
		}
		status := d[q]
		isRunning := status < statusBit
		if isRunning {
			if running == 0 {
				break
			}
			status = running
		} else {
			if status >= statusSysEx {
				break
			}
			q++
		}
		d1, d2 := d[q], byte(0)
		if typ := status & statusTypeMask; typ == statusProgram || typ == statusChanTouch {
			if d1 >= statusBit {
				break
			}
			q++
		} else {
			d2 = d[q+1]
			if (d1|d2)&statusBit != 0 {
				break
			}
			q += 2
		}
		if isRunning && cancel {
			r.RunningAfterMeta++
		}
		cancel = false
		running = status
		tick += int64(delta)
		p = q
		events++
		buf = buf[:len(buf)+1]
		m := &buf[len(buf)-1]
		m.tick, m.status, m.d1, m.d2 = tick, status, d1, d2
	}
	r.pos, r.tick, r.running, r.cancel, r.events = p, tick, running, cancel, events
	return buf
}

// length reads a VLQ length at p and checks that many bytes remain before end. It
// returns the length and the offset of the payload.
func (r *Reader) length(p, end int) (n, q int, ok bool) {
	d := r.data
	vstart := p
	var v uint32
	for i := 0; ; i++ {
		if p >= end {
			r.stop(r.fail(r.track, vstart, errorf(ErrTruncated, "length runs past end of track chunk")))
			return 0, 0, false
		}
		b := d[p]
		p++
		v = v<<7 | uint32(b&^vlqMore)
		if b < vlqMore {
			break
		}
		if i == vlqMaxBytes-1 {
			r.stop(r.fail(r.track, vstart, errorf(ErrBadVLQ, "length longer than %d bytes", vlqMaxBytes)))
			return 0, 0, false
		}
	}
	if uint64(v) > uint64(end-p) {
		r.stop(r.fail(r.track, vstart, errorf(ErrTruncated, "length %d, %d bytes remain in track chunk", v, end-p)))
		return 0, 0, false
	}
	return int(v), p, true
}

package ingest

import (
	"slices"
	"sync"
	"unicode/utf8"
)

// Parse reads a whole Standard MIDI File (or a RIFF RMID file) held in data and
// returns its pieces: one for format 0 and 1, one per track for format 2, whose
// tracks are independent patterns (SMF 1.0). A format-2 piece has Index set to its
// track, and its tempo, meter and key maps come from that track only; for format 0
// and 1 they come from every track. name is used in errors, which are *ParseError
// values wrapping the Err* sentinels.
//
// Notes are sorted by (StartTick, Track, Channel, Pitch), ties by EndTick and
// Velocity, and carry seconds through the tempo map (see TimeMap). Pairing: per
// (track, channel, pitch); note-on with velocity 0 is a note-off; a note-on of a
// sounding pitch ends the earlier note there (WarnRetrigger); notes open at the end
// of their track end there (WarnOpenAtEnd); zero-length notes are kept
// (WarnZeroLength). With opts.Pedal, sustain (CC 64 >= 64) held on a (track,
// channel) extends its notes to the release. Program changes act per channel across
// tracks in time order; channel index 9 is drums (General MIDI 1). See notes.go for
// the details, Reader for what the event reader accepts.
//
// Parse never panics on bad input. It allocates about 24 bytes per input byte at
// most (a 48-byte Note per 3-byte running-status note-on, in a buffer rounded up to
// its pool class by at most half; see Result.Release), usually under 8.
func Parse(name string, data []byte, opts ParseOptions) ([]Piece, error) {
	pieces, _, err := parseHashed(name, data, opts, nil)
	return pieces, err
}

// parseHashed is Parse that, with h not nil, also fills each piece's content hashes
// with h, as hashPiece does, and returns the stats of all the pieces' notes. It
// hashes while the notes are written rather than in a pass of its own.
func parseHashed(name string, data []byte, opts ParseOptions, h *pieceHasher) ([]Piece, pieceStats, error) {
	ps := parserPool.Get().(*parser)
	defer ps.release()
	ps.opts = opts
	ps.hasher, ps.stats = h, noStats()
	r := &ps.r
	if err := r.Reset(name, data, opts.MaxEventsPerTrack); err != nil {
		return nil, noStats(), err
	}
	hdr := r.Header()
	if hdr.Format == format2 {
		pieces := make([]Piece, 0, min(hdr.Tracks, len(data)/chunkHeaderLen+1))
		for r.NextTrack() {
			ps.begin()
			ps.readTrack()
			if r.Err() != nil {
				break
			}
			p := ps.finish(hdr, r.Track())
			t := len(ps.names) - 1
			p.TrackNames = ps.names[t : t+1 : t+1]
			pieces = append(pieces, p)
		}
		if err := r.Err(); err != nil {
			releasePieces(pieces)
			return nil, noStats(), err
		}
		if len(pieces) > 0 {
			ps.fileWarnings(pieces[0].Warnings)
		}
		return pieces, ps.stats, nil
	}
	ps.begin()
	for r.NextTrack() {
		ps.readTrack()
	}
	if err := r.Err(); err != nil {
		return nil, noStats(), err
	}
	p := ps.finish(hdr, 0)
	p.TrackNames = ps.names
	ps.fileWarnings(p.Warnings)
	return []Piece{p}, ps.stats, nil
}

// parser holds the reusable state of one Parse call.
type parser struct {
	r      Reader
	batch  [256]chanMsg // channel messages read at once by Reader.channelRun
	opts   ParseOptions
	pair   pairer
	bounds []int // start of each track's run in pair.buf, plus the end
	progs  []progChange
	names  []string
	tempos []Tempo
	meters []Meter
	keys   []Key
	end    int64
	tm     TimeMap
	sorter tickSorter
	hasher *pieceHasher // hashes each piece as it is finished, when not nil
	stats  pieceStats   // of the pieces hashed

	badMeta                         int
	runningBase, slackBase, eotBase int
}

var parserPool = sync.Pool{New: func() any { return new(parser) }}

// release returns the parser to the pool, dropping references into the input and
// oversized buffers.
func (ps *parser) release() {
	if ps.r.err != nil {
		// a track stopped half way: clear its pairing state
		pr := &ps.pair
		pr.open, pr.held, pr.pedal = [numChannels * numKeys]int32{}, [numChannels * numKeys]int32{}, [numChannels]bool{}
		pr.nopen = 0
		for ch := range pr.pending {
			pr.pending[ch] = pr.pending[ch][:0]
		}
	}
	ps.r = Reader{}
	ps.names = nil
	ps.hasher = nil
	if cap(ps.pair.buf) > 1<<20 {
		ps.pair.buf = nil
	}
	if cap(ps.sorter.keys) > 1<<20 || cap(ps.sorter.counts) > 1<<20 {
		ps.sorter = tickSorter{}
	}
	parserPool.Put(ps)
}

// begin starts a new piece.
func (ps *parser) begin() {
	if want := len(ps.r.data) / 16; cap(ps.pair.buf) < want {
		ps.pair.buf = make([]rawNote, 0, want) // a guess that saves the first regrowths
	}
	ps.pair.buf = ps.pair.buf[:0]
	ps.pair.usePed = ps.opts.Pedal
	ps.pair.retrigger, ps.pair.orphanOff, ps.pair.openAtEnd = 0, 0, 0
	ps.bounds = ps.bounds[:0]
	ps.progs = ps.progs[:0]
	ps.tempos, ps.meters, ps.keys = nil, nil, nil
	ps.end = 0
	ps.badMeta = 0
	ps.runningBase, ps.slackBase, ps.eotBase = ps.r.RunningAfterMeta, ps.r.SlackTracks, ps.r.MissingEOT
	if ps.names == nil {
		ps.names = make([]string, 0, min(ps.r.hdr.Tracks, 64))
	}
}

// readTrack walks the events of the current track.
func (ps *parser) readTrack() {
	r := &ps.r
	pr := &ps.pair
	pr.track = r.Track()
	ps.bounds = append(ps.bounds, len(pr.buf))
	name := ""
	named := false
	ev := r.Event()
	for {
		msgs := r.channelRun(ps.batch[:0])
		ps.channels(msgs)
		if len(msgs) == len(ps.batch) {
			continue // the batch is full: more may follow
		}
		if !r.Next() {
			break
		}
		if ev.Kind == KindChannel {
			ps.channels([]chanMsg{{tick: ev.Tick, status: ev.Status, d1: ev.Data1, d2: ev.Data2}})
			continue
		}
		if ev.Kind != KindMeta {
			continue
		}
		d := ev.Data
		switch ev.Meta {
		case metaTempo:
			if len(d) != tempoLen {
				ps.badMeta++
				continue
			}
			us := uint32(d[0])<<16 | uint32(d[1])<<8 | uint32(d[2])
			if us == 0 {
				ps.badMeta++
				continue
			}
			ps.tempos = append(ps.tempos, Tempo{Tick: ev.Tick, USPerQuarter: us})
		case metaTimeSignature:
			if len(d) < timeSigLen || d[0] == 0 || d[1] > maxDenPow {
				ps.badMeta++
				continue
			}
			ps.meters = append(ps.meters, Meter{Tick: ev.Tick, Num: d[0], Denom: 1 << d[1]})
		case metaKeySignature:
			if len(d) < keySigLen || int8(d[0]) < -7 || int8(d[0]) > 7 || d[1] > 1 {
				ps.badMeta++
				continue
			}
			ps.keys = append(ps.keys, Key{Tick: ev.Tick, Sharps: int8(d[0]), Minor: d[1] == 1})
		case metaTrackName:
			if !named {
				name, named = text(d), true
			}
		}
	}
	if r.Err() != nil {
		return
	}
	t := r.Tick()
	pr.endTrack(t)
	if t > ps.end {
		ps.end = t
	}
	ps.names = append(ps.names, name)
}

// channels pairs the notes, sustain and program changes of channel messages.
func (ps *parser) channels(msgs []chanMsg) {
	pr := &ps.pair
	for i := range msgs {
		m := &msgs[i]
		ch := m.status & statusChannelMask
		switch m.status & statusTypeMask {
		case statusNoteOn:
			if m.d2 != 0 {
				pr.noteOn(ch, m.d1, m.d2, m.tick)
			} else {
				pr.noteOff(ch, m.d1, m.tick)
			}
		case statusNoteOff:
			pr.noteOff(ch, m.d1, m.tick)
		case statusControl:
			if m.d1 == ccSustain {
				pr.sustain(ch, m.d2, m.tick)
			}
		case statusProgram:
			ps.progs = append(ps.progs, progChange{tick: m.tick, channel: ch, program: m.d1})
		}
	}
}

// text decodes a meta text payload: UTF-8 when valid, else Latin-1 (common practice
// for files from older sequencers).
func text(d []byte) string {
	if utf8.Valid(d) {
		return string(d)
	}
	rs := make([]rune, len(d))
	for i, b := range d {
		rs[i] = rune(b)
	}
	return string(rs)
}

// finish builds the piece from what the tracks since begin produced.
func (ps *parser) finish(h Header, index int) Piece {
	pr := &ps.pair
	ps.bounds = append(ps.bounds, len(pr.buf))
	p := Piece{
		Index:           index,
		Format:          h.Format,
		TicksPerQuarter: h.TicksPerQuarter,
		SMPTEFPS:        h.FPS,
		TicksPerFrame:   h.TicksPerFrame,
		EndTick:         ps.end,
		Warnings:        Warnings{},
	}
	if h.FPS > 0 {
		// the quarter-note resolution at the default 120 BPM, for beat-based consumers
		p.TicksPerQuarter = max(1, int(h.FPS*float64(h.TicksPerFrame)*defaultUSPerQuarter/1e6+0.5))
	}
	// tracks are read in order, so a stable sort by tick keeps file order on ties
	byTick := func(a, b int64) int {
		switch {
		case a < b:
			return -1
		case a > b:
			return 1
		}
		return 0
	}
	if len(ps.tempos) > 0 && h.FPS == 0 {
		slices.SortStableFunc(ps.tempos, func(a, b Tempo) int { return byTick(a.Tick, b.Tick) })
		p.Tempos = ps.tempos
	}
	if len(ps.meters) > 0 {
		slices.SortStableFunc(ps.meters, func(a, b Meter) int { return byTick(a.Tick, b.Tick) })
		p.Meters = ps.meters
	}
	if len(ps.keys) > 0 {
		slices.SortStableFunc(ps.keys, func(a, b Key) int { return byTick(a.Tick, b.Tick) })
		p.Keys = ps.keys
	}

	for i := 0; i+1 < len(ps.bounds); i++ {
		sortRun(pr.buf[ps.bounds[i]:ps.bounds[i+1]])
	}
	if len(ps.progs) > 0 {
		slices.SortStableFunc(ps.progs, func(a, b progChange) int { return byTick(a.tick, b.tick) })
	}
	ps.tm.build(&p)
	em := emitter{tm: &ps.tm, progs: ps.progs}
	notes := getNotes(len(pr.buf)) // every note is stored below
	hs := ps.hasher
	if keys, ends, idxBits, ok := ps.sorter.order(pr.buf, ps.bounds); ok {
		if hs != nil {
			hs.keys = slices.Grow(hs.keys[:0], len(notes))
			em.hashKeys = hs.keys[:len(notes)]
		}
		emitSorted(notes, pr.buf, keys, ends, idxBits, &em)
		p.Notes = notes
		if hs != nil {
			ps.stats.add(hs.hashKeys(&p, em.hashKeys, em.maxEnd))
		}
	} else {
		mergeRuns(notes, pr.buf, ps.bounds, &em)
		p.Notes = notes
		if hs != nil {
			ps.stats.add(hs.hashPiece(&p))
		}
	}
	zero := em.zero

	w := p.Warnings
	w.Add(WarnRetrigger, pr.retrigger)
	w.Add(WarnOrphanOff, pr.orphanOff)
	w.Add(WarnOpenAtEnd, pr.openAtEnd)
	w.Add(WarnZeroLength, zero)
	w.Add(WarnBadMeta, ps.badMeta)
	w.Add(WarnRunningAfterMeta, ps.r.RunningAfterMeta-ps.runningBase)
	w.Add(WarnAfterEOT, ps.r.SlackTracks-ps.slackBase)
	w.Add(WarnMissingEOT, ps.r.MissingEOT-ps.eotBase)
	return p
}

// fileWarnings adds the warnings that belong to the file rather than a track.
func (ps *parser) fileWarnings(w Warnings) {
	if ps.r.TrailingBytes() > 0 {
		w.Add(WarnTrailing, 1)
	}
	w.Add(WarnUnknownChunk, ps.r.SkippedChunks)
}

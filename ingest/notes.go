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
// Program changes are per channel across all tracks of a piece, in time order: each
// note gets the program last set on its channel at or before its start (program
// changes at the note's own tick apply first), General MIDI program 0 before any.

const noKey = 0 // empty slot in the key tables; slots hold note index + 1

// pairer pairs the note events of one track into notes appended to buf.
type pairer struct {
	buf     []Note
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
	p.buf = append(p.buf, Note{
		StartTick: tick,
		EndTick:   -1,
		Pitch:     key,
		Velocity:  vel,
		Channel:   ch,
		Drum:      ch == drumChannel,
		Track:     p.track,
	})
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
func sortRun(ns []Note) {
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

func noteLess(a, b *Note) bool {
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
// is in (StartTick, Track, Channel, Pitch) order.
func mergeRuns(dst, src []Note, bounds []int) {
	type head struct{ pos, end int }
	var small [32]head
	heads := small[:0]
	for i := 0; i+1 < len(bounds); i++ {
		if bounds[i] < bounds[i+1] {
			heads = append(heads, head{bounds[i], bounds[i+1]})
		}
	}
	out := 0
	for len(heads) > 1 {
		best := 0
		bt := src[heads[0].pos].StartTick
		for j := 1; j < len(heads); j++ {
			if t := src[heads[j].pos].StartTick; t < bt {
				best, bt = j, t
			}
		}
		h := &heads[best]
		// copy the whole stretch of this run that precedes every other head
		limit := int64(1<<63 - 1)
		for j := range heads {
			if j == best {
				continue
			}
			t := src[heads[j].pos].StartTick
			if j < best {
				t-- // earlier runs win ties: stop before their tick
			}
			if t < limit {
				limit = t
			}
		}
		e := h.pos + 1
		for e < h.end && src[e].StartTick <= limit {
			e++
		}
		out += copy(dst[out:], src[h.pos:e])
		h.pos = e
		if h.pos == h.end {
			heads = append(heads[:best], heads[best+1:]...)
		}
	}
	if len(heads) == 1 {
		copy(dst[out:], src[heads[0].pos:heads[0].end])
	}
}

// progChange is one program change, for assigning programs after sorting.
type progChange struct {
	tick    int64
	channel uint8
	program uint8
}

// assignPrograms sets Program on notes (in StartTick order) from changes (in tick
// order, stable by track).
func assignPrograms(notes []Note, changes []progChange) {
	if len(changes) == 0 {
		return
	}
	var cur [numChannels]uint8
	c := 0
	for i := range notes {
		n := &notes[i]
		for c < len(changes) && changes[c].tick <= n.StartTick {
			cur[changes[c].channel&statusChannelMask] = changes[c].program
			c++
		}
		n.Program = cur[n.Channel&statusChannelMask]
	}
}

package tokenize

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"

	"github.com/relshard/relshard/ingest"
)

// Errors of the decoder, wrapped in a *DecodeError.
var (
	ErrUnknownID = errors.New("id outside the vocabulary")
	ErrSequence  = errors.New("invalid token sequence")
)

// DecodeError reports the token at which decoding failed.
type DecodeError struct {
	Index  int    // position in the id sequence
	ID     int32  // the offending id
	Label  string // its label ("?id" outside the vocabulary)
	Detail string
	Err    error // ErrUnknownID or ErrSequence
}

func (e *DecodeError) Error() string {
	s := fmt.Sprintf("token %d (%s): %v", e.Index, e.Label, e.Err)
	if e.Detail != "" {
		s += ": " + e.Detail
	}
	return s
}

func (e *DecodeError) Unwrap() error { return e.Err }

// Decoded output resolution and timing.
const (
	// PerformanceTPQ with the SMF 1.0 default tempo (500,000 µs per quarter) makes
	// one tick one millisecond in decoded performance streams.
	PerformanceTPQ = 500
	// DrumHoldMS is the length given to a decoded drum hit (hits have no note-off).
	DrumHoldMS = 100
	// defaultVelocity is used before any set-velocity token (common practice: mf).
	defaultVelocity = 64
	drumChannel     = 9 // General MIDI 1: channel 10, index 9
)

// Decoder turns id sequences of one config back into notes.
type Decoder struct {
	vocab *Vocab
	clock clock
}

// NewDecoder builds the vocabulary of cfg for decoding.
func NewDecoder(cfg Config) (*Decoder, error) {
	v, err := NewVocab(cfg)
	if err != nil {
		return nil, err
	}
	return &Decoder{vocab: v}, nil
}

// Decode decodes ids with the vocabulary of cfg; see (*Decoder).Decode.
func Decode(ids []int32, cfg Config) (*ingest.Piece, error) {
	d, err := NewDecoder(cfg)
	if err != nil {
		return nil, err
	}
	return d.Decode(ids)
}

// Decode turns a stream or a window back into a piece: notes with ticks and seconds,
// and the tempo and meter map (grid). A begin token may only come first; after an
// end token only pad tokens may follow, and pad tokens only trail. Performance
// streams: a note-off with no sounding note is ignored and a note-on of a sounding
// key ends it first (both counted in the piece's Warnings), notes still sounding at
// the end end at the last time. Grid streams must be well formed (bars, increasing
// positions inside a bar, each note as pitch, duration, velocity; meter and tempo
// right after a bar or, as in a window's prefix, before the first bar); anything
// else is an error naming the token.
func (d *Decoder) Decode(ids []int32) (*ingest.Piece, error) {
	p := &ingest.Piece{Format: 1, Warnings: ingest.Warnings{}}
	end := len(ids)
	for i, id := range ids {
		if id < 0 || int(id) >= d.vocab.Size() {
			return nil, d.fail(i, id, ErrUnknownID, "")
		}
		switch {
		case id == BeginID && i != 0:
			return nil, d.fail(i, id, ErrSequence, "begin token not at the start")
		case id == PadID || id == EndID:
			if end == len(ids) {
				end = i
			}
		case end < len(ids):
			return nil, d.fail(i, id, ErrSequence, "token after end or padding")
		}
		if id == EndID && i != end {
			return nil, d.fail(i, id, ErrSequence, "end token after padding")
		}
	}
	ids = ids[:end]
	var err error
	if d.vocab.cfg.Encoding == Grid {
		err = d.decodeGrid(ids, p)
	} else {
		err = d.decodePerformance(ids, p)
	}
	if err != nil {
		return nil, err
	}
	// Tracks as WriteSMF writes them: the conductor track, then one per channel in order.
	var used [16]bool
	for _, n := range p.Notes {
		used[n.Channel] = true
	}
	var track [16]int
	t := 0
	for c := range used {
		if used[c] {
			t++
			track[c] = t
		}
	}
	for i := range p.Notes {
		p.Notes[i].Track = track[p.Notes[i].Channel]
	}
	slices.SortStableFunc(p.Notes, func(a, b ingest.Note) int {
		return cmp.Or(cmp.Compare(a.StartTick, b.StartTick), cmp.Compare(a.Track, b.Track),
			cmp.Compare(a.Channel, b.Channel), cmp.Compare(a.Pitch, b.Pitch))
	})
	for _, n := range p.Notes {
		p.EndTick = max(p.EndTick, n.EndTick)
	}
	d.clock.reset(p)
	for i := range p.Notes {
		n := &p.Notes[i]
		n.Start = d.clock.seconds(float64(n.StartTick))
		n.End = d.clock.seconds(float64(n.EndTick))
	}
	return p, nil
}

func (d *Decoder) fail(i int, id int32, err error, detail string) error {
	return &DecodeError{Index: i, ID: id, Label: d.vocab.Label(id), Err: err, Detail: detail}
}

func (d *Decoder) decodePerformance(ids []int32, p *ingest.Piece) error {
	v := d.vocab
	p.TicksPerQuarter = PerformanceTPQ
	p.Tempos = []ingest.Tempo{{Tick: 0, USPerQuarter: defaultUSPerQuarter}}
	var open [128]int // index+1 into p.Notes of the sounding note of each key
	var cur int64
	vel := uint8(defaultVelocity)
	for i, id := range ids {
		if id == BeginID {
			continue
		}
		e := v.entries[id]
		switch e.Kind {
		case KindShift:
			cur += int64(e.Value)
			if cur > maxMS {
				return d.fail(i, id, ErrSequence, "time past the limit")
			}
		case KindVelocity:
			vel = v.velValue(e.Value)
		case KindNoteOn:
			if j := open[e.Value]; j != 0 {
				p.Notes[j-1].EndTick = cur
				p.Warnings.Add(ingest.WarnRetrigger, 1)
			}
			p.Notes = append(p.Notes, ingest.Note{StartTick: cur, EndTick: cur, Pitch: uint8(e.Value), Velocity: vel})
			open[e.Value] = len(p.Notes)
		case KindNoteOff:
			j := open[e.Value]
			if j == 0 {
				p.Warnings.Add(ingest.WarnOrphanOff, 1)
				continue
			}
			p.Notes[j-1].EndTick = cur
			open[e.Value] = 0
		case KindHit:
			p.Notes = append(p.Notes, ingest.Note{StartTick: cur, EndTick: cur + DrumHoldMS, Pitch: uint8(e.Value),
				Velocity: vel, Channel: drumChannel, Drum: true})
		default:
			return d.fail(i, id, ErrSequence, "not a performance token")
		}
	}
	for k, j := range open {
		if j != 0 {
			p.Notes[j-1].EndTick = cur
			p.Warnings.Add(ingest.WarnOpenAtEnd, 1)
			open[k] = 0
		}
	}
	return nil
}

// gridTPQ is the decoded resolution of a grid: a whole number of ticks per step,
// 480 per quarter for the default grid of 12.
func gridTPQ(gpq int) int {
	k := max(1, (480+gpq-1)/gpq)
	return gpq * k
}

func (d *Decoder) decodeGrid(ids []int32, p *ingest.Piece) error {
	v := d.vocab
	gpq := v.cfg.GridPerQuarter
	p.TicksPerQuarter = gridTPQ(gpq)
	k := int64(p.TicksPerQuarter / gpq)
	var (
		inBar      bool
		barStart   int64
		barLen     = int64(4 * gpq)
		pos        = int64(-1)
		inst       = int16(0)
		pitch, dur = -1, -1
		curTempo   = -1
		curMeter   = int32(-1)
	)
	chanOf := map[int16]uint8{}
	nextChan := uint8(0)
	channel := func(inst int16) uint8 {
		if inst == InstDrums {
			return drumChannel
		}
		if c, ok := chanOf[inst]; ok {
			return c
		}
		c := nextChan
		if c == drumChannel {
			c++
		}
		if c > 15 {
			c = 15 // a 16th melodic family shares the last channel; program changes switch it
		} else {
			nextChan = c + 1
		}
		chanOf[inst] = c
		return c
	}
	noteOpen := func(i int, id int32) error {
		if pitch >= 0 {
			return d.fail(i, id, ErrSequence, "note incomplete (want pitch, duration, velocity)")
		}
		return nil
	}
	for i, id := range ids {
		if id == BeginID {
			continue
		}
		e := v.entries[id]
		switch e.Kind {
		case KindBar:
			if err := noteOpen(i, id); err != nil {
				return err
			}
			if inBar {
				barStart += barLen
			}
			inBar = true
			pos = -1
			if barStart*k > maxTick {
				return d.fail(i, id, ErrSequence, "time past the limit")
			}
		case KindMeter, KindTempo:
			// Before the first bar they set up the bar it opens (a window's prefix).
			if pos >= 0 {
				return d.fail(i, id, ErrSequence, "meter or tempo not at a bar start")
			}
			if e.Kind == KindMeter {
				m := v.meters[id-v.meterBase]
				barLen = int64(m.steps)
				if id != curMeter {
					p.Meters = slices.DeleteFunc(p.Meters, func(x ingest.Meter) bool { return x.Tick == barStart*k })
					p.Meters = append(p.Meters, ingest.Meter{Tick: barStart * k, Num: uint8(m.num), Denom: uint8(m.den)})
					curMeter = id
				}
			} else {
				if e.Value != curTempo {
					us := uint32(math.Round(60e6 / v.tempoBPM[e.Value]))
					p.Tempos = slices.DeleteFunc(p.Tempos, func(x ingest.Tempo) bool { return x.Tick == barStart*k })
					p.Tempos = append(p.Tempos, ingest.Tempo{Tick: barStart * k, USPerQuarter: us})
					curTempo = e.Value
				}
			}
		case KindPosition:
			if err := noteOpen(i, id); err != nil {
				return err
			}
			if !inBar {
				return d.fail(i, id, ErrSequence, "position before any bar")
			}
			np := int64(e.Value)
			if np >= barLen {
				return d.fail(i, id, ErrSequence, fmt.Sprintf("position %d past the bar's %d steps", np, barLen))
			}
			if np <= pos {
				return d.fail(i, id, ErrSequence, fmt.Sprintf("position %d not after %d", np, pos))
			}
			pos = np
		case KindInst:
			if err := noteOpen(i, id); err != nil {
				return err
			}
			inst = int16(e.Value)
		case KindPitch:
			if err := noteOpen(i, id); err != nil {
				return err
			}
			if pos < 0 {
				return d.fail(i, id, ErrSequence, "pitch before any position in the bar")
			}
			pitch = e.Value
		case KindDuration:
			if pitch < 0 || dur >= 0 {
				return d.fail(i, id, ErrSequence, "duration not after a pitch")
			}
			dur = e.Value
		case KindVelocity:
			if dur < 0 {
				return d.fail(i, id, ErrSequence, "velocity not after a duration")
			}
			on := (barStart + pos) * k
			n := ingest.Note{StartTick: on, EndTick: on + int64(dur)*k, Pitch: uint8(pitch),
				Velocity: v.velValue(e.Value), Channel: channel(inst), Drum: inst == InstDrums}
			if !n.Drum {
				n.Program = uint8(inst)
			}
			p.Notes = append(p.Notes, n)
			pitch, dur = -1, -1
		default:
			return d.fail(i, id, ErrSequence, "not a grid token")
		}
	}
	if pitch >= 0 {
		return d.fail(len(ids), EndID, ErrSequence, "stream ends inside a note")
	}
	return nil
}

package tokenize

import (
	"encoding/json"
	"fmt"
	"math"
	"strconv"
)

// Kind is the kind of a vocabulary entry.
type Kind uint8

// Token kinds. The performance encoding uses Special, NoteOn, NoteOff, Shift,
// Velocity and Hit; the beat-grid encoding uses Special, Bar, Meter, Tempo, Position,
// Inst, Pitch, Duration and Velocity.
const (
	KindSpecial  Kind = iota // pad, begin, end
	KindNoteOn               // value: key 0-127
	KindNoteOff              // value: key 0-127
	KindShift                // value: ms advanced
	KindVelocity             // value: bin index
	KindHit                  // drum hit; value: key 0-127
	KindBar                  // value: 0
	KindMeter                // value: numerator; Den holds the denominator
	KindTempo                // value: bin index
	KindPosition             // value: grid steps from the bar start
	KindInst                 // value: first GM program of the family, or InstDrums
	KindPitch                // value: key 0-127
	KindDuration             // value: grid steps
)

var kindNames = [...]string{"special", "note_on", "note_off", "shift", "velocity", "hit",
	"bar", "meter", "tempo", "position", "inst", "pitch", "duration"}

func (k Kind) String() string {
	if int(k) < len(kindNames) {
		return kindNames[k]
	}
	return "kind(" + strconv.Itoa(int(k)) + ")"
}

// Special token ids, the same in every vocabulary.
const (
	PadID   int32 = 0 // padding
	BeginID int32 = 1 // begin of sequence
	EndID   int32 = 2 // end of sequence
)

// gmFamilies are the 16 program families of General MIDI 1 (programs 8f..8f+7),
// named in our own short spelling.
var gmFamilies = [16]string{"piano", "chromatic", "organ", "guitar", "bass", "strings",
	"ensemble", "brass", "reed", "pipe", "lead", "pad", "fx", "ethnic", "percussive", "sfx"}

// meterSpec is one meter with a token in the grid vocabulary.
type meterSpec struct {
	num, den int
	steps    int // bar length in grid steps
}

// Grid meter vocabulary: numerators 1..maxMeterNum over these denominators, when the
// bar is a whole number of grid steps and at most maxBarQuarters quarters long.
const (
	maxMeterNum    = 16
	maxBarQuarters = 12
)

var meterDens = [...]int{2, 4, 8, 16}

// Entry is one vocabulary entry.
type Entry struct {
	ID    int32
	Label string
	Kind  Kind
	Value int     // see the Kind constants
	Den   int     // meter denominator
	BPM   float64 // the tempo a tempo token stands for (the bin centre, to 0.01)
}

// Vocab is the vocabulary of one config: ids, labels, kinds and values. It is
// deterministic for a config and immutable once built.
type Vocab struct {
	cfg     Config
	entries []Entry
	kinds   []Kind // kinds[id], compact for the hot loops

	// Performance id bases.
	onBase, offBase, shiftBase, velBase, hitBase int32
	shiftSteps                                   int

	// Grid id bases.
	barID, meterBase, tempoBase, posBase, instBase, pitchBase, durBase int32
	meters                                                             []meterSpec
	maxPos                                                             int
	tempoBPM                                                           []float64
	meterID                                                            map[[2]int]int32

	velLo, velHi [129]uint8 // lowest and highest velocity of each bin
	velBins      [128]uint8 // bin of each velocity
}

// NewVocab builds the vocabulary of cfg.
func NewVocab(cfg Config) (*Vocab, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	v := &Vocab{cfg: cfg}
	v.add(KindSpecial, "pad", 0)
	v.add(KindSpecial, "begin", 1)
	v.add(KindSpecial, "end", 2)
	bins := cfg.VelocityBins
	for vel := range v.velBins {
		v.velBins[vel] = uint8(vel * bins / 128)
	}
	for b := 0; b < bins; b++ {
		lo := (b*128 + bins - 1) / bins
		hi := ((b+1)*128+bins-1)/bins - 1
		v.velLo[b], v.velHi[b] = uint8(lo), uint8(hi)
	}
	switch cfg.Encoding {
	case Performance:
		v.onBase = v.next()
		for k := 0; k < 128; k++ {
			v.add(KindNoteOn, "on."+strconv.Itoa(k), k)
		}
		v.offBase = v.next()
		for k := 0; k < 128; k++ {
			v.add(KindNoteOff, "off."+strconv.Itoa(k), k)
		}
		v.shiftSteps = cfg.MaxShiftMS / cfg.ShiftMS
		v.shiftBase = v.next()
		for s := 1; s <= v.shiftSteps; s++ {
			ms := s * cfg.ShiftMS
			v.add(KindShift, "dt."+strconv.Itoa(ms), ms)
		}
		v.velBase = v.next()
		for b := 0; b < bins; b++ {
			v.add(KindVelocity, "vel."+strconv.Itoa(b), b)
		}
		v.hitBase = -1
		if cfg.Drums == DrumsKeep {
			v.hitBase = v.next()
			for k := 0; k < 128; k++ {
				v.add(KindHit, "hit."+strconv.Itoa(k), k)
			}
		}
	case Grid:
		v.barID = v.next()
		v.add(KindBar, "bar", 0)
		v.meterID = map[[2]int]int32{}
		v.meterBase = v.next()
		for _, den := range meterDens {
			for num := 1; num <= maxMeterNum; num++ {
				q4 := num * 4 * cfg.GridPerQuarter // bar steps times den
				if q4%den != 0 || num*4 > maxBarQuarters*den {
					continue
				}
				m := meterSpec{num: num, den: den, steps: q4 / den}
				v.meterID[[2]int{num, den}] = v.next()
				v.meters = append(v.meters, m)
				v.entries = append(v.entries, Entry{ID: v.next(), Label: "meter." + strconv.Itoa(num) + "/" + strconv.Itoa(den),
					Kind: KindMeter, Value: num, Den: den})
				v.maxPos = max(v.maxPos, m.steps)
			}
		}
		if _, ok := v.meterID[[2]int{4, 4}]; !ok {
			// Cannot happen: 4/4 is 4*grid_per_quarter steps for any grid.
			return nil, fmt.Errorf("tokenize: internal error: no 4/4 meter in the grid vocabulary")
		}
		v.tempoBase = v.next()
		v.tempoBPM = make([]float64, cfg.TempoBins)
		for b := range v.tempoBPM {
			bpm := cfg.TempoMinBPM
			if cfg.TempoBins > 1 {
				bpm = cfg.TempoMinBPM * math.Pow(cfg.TempoMaxBPM/cfg.TempoMinBPM, float64(b)/float64(cfg.TempoBins-1))
			}
			v.tempoBPM[b] = bpm
			v.entries = append(v.entries, Entry{ID: v.next(), Label: "tempo." + strconv.Itoa(b), Kind: KindTempo,
				Value: b, BPM: math.Round(bpm*100) / 100})
		}
		v.posBase = v.next()
		for p := 0; p < v.maxPos; p++ {
			v.add(KindPosition, "pos."+strconv.Itoa(p), p)
		}
		v.instBase = v.next()
		for f, name := range gmFamilies {
			v.add(KindInst, "inst."+name, f*8)
		}
		v.add(KindInst, "inst.drums", InstDrums)
		v.pitchBase = v.next()
		for k := 0; k < 128; k++ {
			v.add(KindPitch, "pitch."+strconv.Itoa(k), k)
		}
		v.durBase = v.next()
		for d := 1; d <= cfg.MaxDurationSteps; d++ {
			v.add(KindDuration, "dur."+strconv.Itoa(d), d)
		}
		v.velBase = v.next()
		for b := 0; b < bins; b++ {
			v.add(KindVelocity, "vel."+strconv.Itoa(b), b)
		}
	}
	v.kinds = make([]Kind, len(v.entries))
	for i, e := range v.entries {
		v.kinds[i] = e.Kind
	}
	return v, nil
}

func (v *Vocab) next() int32 { return int32(len(v.entries)) }

func (v *Vocab) add(k Kind, label string, value int) {
	v.entries = append(v.entries, Entry{ID: v.next(), Label: label, Kind: k, Value: value})
}

// Size is the number of ids, special tokens included.
func (v *Vocab) Size() int { return len(v.entries) }

// Config is the config the vocabulary was built for.
func (v *Vocab) Config() Config { return v.cfg }

// Label is the spelling of id, or "?<id>" for an id outside the vocabulary.
func (v *Vocab) Label(id int32) string {
	if id < 0 || int(id) >= len(v.entries) {
		return "?" + strconv.Itoa(int(id))
	}
	return v.entries[id].Label
}

// Entry is the vocabulary entry of id; ok is false outside the vocabulary.
func (v *Vocab) Entry(id int32) (e Entry, ok bool) {
	if id < 0 || int(id) >= len(v.entries) {
		return Entry{}, false
	}
	return v.entries[id], true
}

// Lookup finds the id of a label.
func (v *Vocab) Lookup(label string) (int32, bool) {
	for _, e := range v.entries {
		if e.Label == label {
			return e.ID, true
		}
	}
	return 0, false
}

// velBin maps a MIDI velocity to its bin.
func (v *Vocab) velBin(vel uint8) int { return int(v.velBins[vel&127]) }

// velValue is the velocity a bin decodes to: the middle of the bin, at least 1.
func (v *Vocab) velValue(bin int) uint8 {
	m := (int(v.velLo[bin]) + int(v.velHi[bin])) / 2
	return uint8(max(m, 1))
}

// tempoBin maps beats per minute to the nearest tempo bin in log space.
func (v *Vocab) tempoBin(bpm float64) int {
	n := len(v.tempoBPM)
	if n == 1 || !(bpm > 0) {
		return 0
	}
	lo, hi := math.Log(v.cfg.TempoMinBPM), math.Log(v.cfg.TempoMaxBPM)
	b := int(math.Round((math.Log(bpm) - lo) / (hi - lo) * float64(n-1)))
	return min(max(b, 0), n-1)
}

type vocabJSON struct {
	Encoding string      `json:"encoding"`
	Size     int         `json:"size"`
	Config   Config      `json:"config"`
	Tokens   []entryJSON `json:"tokens"`
}

type entryJSON struct {
	ID    int32   `json:"id"`
	Label string  `json:"label"`
	Kind  string  `json:"kind"`
	Value int     `json:"value"`
	Den   int     `json:"den,omitempty"`
	BPM   float64 `json:"bpm,omitempty"`
}

// MarshalJSON writes the vocabulary: its encoding, size, config and every token's id,
// label, kind and value (meters add den, tempos bpm), special tokens first.
func (v *Vocab) MarshalJSON() ([]byte, error) {
	out := vocabJSON{Encoding: v.cfg.Encoding, Size: len(v.entries), Config: v.cfg, Tokens: make([]entryJSON, len(v.entries))}
	for i, e := range v.entries {
		out.Tokens[i] = entryJSON{ID: e.ID, Label: e.Label, Kind: e.Kind.String(), Value: e.Value, Den: e.Den, BPM: e.BPM}
	}
	return json.Marshal(out)
}

package tokenize

import (
	"errors"
	"fmt"
	"math"
)

// Encoding names.
const (
	Performance = "performance" // Oore et al. 2018 event stream, time in ms
	Grid        = "grid"        // bar/position stream, time in grid steps
)

// Drum handling.
const (
	DrumsDrop = "drop" // notes on General MIDI channel 10 are left out
	DrumsKeep = "keep" // drums are encoded: hit tokens (performance) or the drums instrument (grid)
)

// Config chooses an encoding and its parameters, the window cut and the
// augmentation. Its YAML keys are the snake_case names in the tags. The zero value is
// not valid; start from DefaultConfig.
type Config struct {
	Encoding string `yaml:"encoding" json:"encoding"` // Performance or Grid

	// Performance encoding.
	ShiftMS      int `yaml:"shift_ms" json:"shift_ms"`           // time-shift step in ms
	MaxShiftMS   int `yaml:"max_shift_ms" json:"max_shift_ms"`   // longest single shift; a multiple of shift_ms
	VelocityBins int `yaml:"velocity_bins" json:"velocity_bins"` // set-velocity bins over 0-127 (both encodings)

	Drums string `yaml:"drums" json:"drums"` // DrumsDrop or DrumsKeep (both encodings)

	// Beat-grid encoding.
	GridPerQuarter   int     `yaml:"grid_per_quarter" json:"grid_per_quarter"`     // grid steps per quarter note
	MaxDurationSteps int     `yaml:"max_duration_steps" json:"max_duration_steps"` // longer notes are clipped
	TempoBins        int     `yaml:"tempo_bins" json:"tempo_bins"`                 // tempo tokens, log-spaced
	TempoMinBPM      float64 `yaml:"tempo_min_bpm" json:"tempo_min_bpm"`           // centre of the lowest tempo bin
	TempoMaxBPM      float64 `yaml:"tempo_max_bpm" json:"tempo_max_bpm"`           // centre of the highest tempo bin

	// Windows.
	MaxLen int `yaml:"max_len" json:"max_len"` // tokens per window, state prefix included
	Stride int `yaml:"stride" json:"stride"`   // stream tokens between window starts; 0 means max_len
	MinLen int `yaml:"min_len" json:"min_len"` // windows shorter than this (the tail) are dropped

	// Augmentation: every combination is a variant; the identity comes first.
	Transpose []int     `yaml:"transpose" json:"transpose"` // semitone offsets; drums untouched
	Stretch   []float64 `yaml:"stretch" json:"stretch"`     // time factors (performance only); 1.1 is 10% slower
}

// DefaultConfig returns the defaults: performance encoding with 10 ms steps up to
// 1 s and 32 velocity bins (Huang et al. 2018), drums dropped; beat grid of 12 steps
// per quarter; windows of 2048 tokens; no augmentation.
func DefaultConfig() Config {
	return Config{
		Encoding:         Performance,
		ShiftMS:          10,
		MaxShiftMS:       1000,
		VelocityBins:     32,
		Drums:            DrumsDrop,
		GridPerQuarter:   12,
		MaxDurationSteps: 96,
		TempoBins:        32,
		TempoMinBPM:      40,
		TempoMaxBPM:      250,
		MaxLen:           2048,
		Stride:           0,
		MinLen:           32,
		Transpose:        []int{0},
		Stretch:          []float64{1},
	}
}

// Limits checked by Validate.
const (
	maxShiftSteps    = 10000
	maxGridPerQ      = 960
	maxDurationSteps = 100000
	maxTempoBins     = 1000
	minMaxLen        = 16
	maxMaxLen        = 1 << 20
	maxTranspose     = 127
)

// Validate reports every invalid setting, naming its key.
func (c Config) Validate() error {
	var errs []error
	bad := func(format string, a ...any) { errs = append(errs, fmt.Errorf(format, a...)) }
	switch c.Encoding {
	case Performance, Grid:
	default:
		bad("encoding %q: want %q or %q", c.Encoding, Performance, Grid)
	}
	switch c.Drums {
	case DrumsDrop, DrumsKeep:
	default:
		bad("drums %q: want %q or %q", c.Drums, DrumsDrop, DrumsKeep)
	}
	if c.VelocityBins < 1 || c.VelocityBins > 128 {
		bad("velocity_bins %d: want 1..128", c.VelocityBins)
	}
	if c.Encoding == Performance {
		if c.ShiftMS < 1 {
			bad("shift_ms %d: want at least 1", c.ShiftMS)
		} else if c.MaxShiftMS < c.ShiftMS || c.MaxShiftMS%c.ShiftMS != 0 || c.MaxShiftMS/c.ShiftMS > maxShiftSteps {
			bad("max_shift_ms %d: want a multiple of shift_ms (%d), at most %d steps", c.MaxShiftMS, c.ShiftMS, maxShiftSteps)
		}
	}
	if c.Encoding == Grid {
		if c.GridPerQuarter < 1 || c.GridPerQuarter > maxGridPerQ {
			bad("grid_per_quarter %d: want 1..%d", c.GridPerQuarter, maxGridPerQ)
		}
		if c.MaxDurationSteps < 1 || c.MaxDurationSteps > maxDurationSteps {
			bad("max_duration_steps %d: want 1..%d", c.MaxDurationSteps, maxDurationSteps)
		}
		if c.TempoBins < 1 || c.TempoBins > maxTempoBins {
			bad("tempo_bins %d: want 1..%d", c.TempoBins, maxTempoBins)
		}
		if !(c.TempoMinBPM > 0) || !(c.TempoMaxBPM >= c.TempoMinBPM) || math.IsInf(c.TempoMaxBPM, 0) || (c.TempoBins > 1 && c.TempoMaxBPM == c.TempoMinBPM) {
			bad("tempo_min_bpm %v, tempo_max_bpm %v: want 0 < min < max", c.TempoMinBPM, c.TempoMaxBPM)
		}
		for _, s := range c.Stretch {
			if s != 1 {
				bad("stretch %v: tempo stretch applies only to the %s encoding (the grid is in beats)", s, Performance)
				break
			}
		}
	}
	if c.MaxLen < minMaxLen || c.MaxLen > maxMaxLen {
		bad("max_len %d: want %d..%d", c.MaxLen, minMaxLen, maxMaxLen)
	}
	if c.Stride < 0 || c.Stride > c.MaxLen {
		bad("stride %d: want 0 (= max_len) or 1..max_len (%d)", c.Stride, c.MaxLen)
	}
	if c.MinLen < 0 || c.MinLen > c.MaxLen {
		bad("min_len %d: want 0..max_len (%d)", c.MinLen, c.MaxLen)
	}
	seenT := map[int]bool{}
	for _, t := range c.Transpose {
		if t < -maxTranspose || t > maxTranspose {
			bad("transpose %d: want -%d..%d semitones", t, maxTranspose, maxTranspose)
		}
		if seenT[t] {
			bad("transpose %d: listed twice", t)
		}
		seenT[t] = true
	}
	seenS := map[float64]bool{}
	for _, s := range c.Stretch {
		if !(s >= 0.25 && s <= 4) {
			bad("stretch %v: want a factor in 0.25..4", s)
		}
		if seenS[s] {
			bad("stretch %v: listed twice", s)
		}
		seenS[s] = true
	}
	if len(errs) > 0 {
		return fmt.Errorf("tokenize config: %w", errors.Join(errs...))
	}
	return nil
}

// stride is the effective stride.
func (c Config) stride() int {
	if c.Stride == 0 {
		return c.MaxLen
	}
	return c.Stride
}

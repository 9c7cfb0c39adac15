package tokenize

import (
	"cmp"
	"fmt"
	"math"
	"slices"

	"github.com/relshard/relshard/ingest"
)

// Fidelity reports how well decoding the identity stream of one piece recovers its
// notes: the practitioner's view of what quantization loses.
type Fidelity struct {
	Encoding string `json:"encoding"`
	Notes    int    `json:"notes"`   // notes in the piece
	Decoded  int    `json:"decoded"` // notes decoded from the stream
	Matched  int    `json:"matched"` // decoded notes paired with a piece note of the same key
	// Exact counts matched notes with onset, release (not for drum hits), key and
	// velocity all recovered: to the tick on the grid, to within 0.5 ms in the
	// performance encoding.
	Exact int `json:"exact"`
	// ExactTiming is Exact without the velocity condition.
	ExactTiming int `json:"exact_timing"`
	// WithinBound counts matched notes inside the encoding's guarantee: performance,
	// onset and release within shift_ms/2 and velocity in its bin; grid, onset and
	// duration exact and velocity in its bin.
	WithinBound int `json:"within_bound"`
	// OnGrid counts (grid encoding) the encoded piece notes whose onset and end fall
	// on the grid and whose length is 1..max_duration_steps steps; OnGridExact those of them
	// recovered with onset, duration and key exact, which the encoding guarantees.
	OnGrid       int           `json:"on_grid,omitempty"`
	OnGridExact  int           `json:"on_grid_exact,omitempty"`
	OnsetErrors  []ErrorBucket `json:"onset_errors"`   // onset error distribution over matched notes
	MaxOnsetMS   float64       `json:"max_onset_ms"`   // largest onset error
	MeanOnsetMS  float64       `json:"mean_onset_ms"`  // mean onset error
	MaxReleaseMS float64       `json:"max_release_ms"` // largest release error (not drum hits)
	Stats        Stats         `json:"encode"`         // what the encoder did
}

// ErrorBucket counts notes whose error is at most UpToMS and above the previous
// bucket's bound; the last bucket, UpToMS -1, takes the rest.
type ErrorBucket struct {
	UpToMS float64 `json:"up_to_ms"`
	Notes  int     `json:"notes"`
}

// onsetBuckets are the upper bounds of the onset error distribution, in ms.
var onsetBuckets = [...]float64{0.5, 1, 2, 5, 10, 20, 50, 100}

// ExactShare is the share of the piece's notes recovered exactly (0 for no notes).
func (f Fidelity) ExactShare() float64 {
	if f.Notes == 0 {
		return 0
	}
	return float64(f.Exact) / float64(f.Notes)
}

type fnote struct {
	drum      bool
	pitch     uint8
	on, off   float64 // seconds
	vel       uint8
	onQ, offQ int64 // grid: ticks scaled to a common resolution; performance unused
	onGrid    bool
}

// Fidelity encodes the identity variant of p, decodes it and pairs the decoded notes
// with the piece's notes, key by key in onset order.
func (e *Encoder) Fidelity(p *ingest.Piece) (Fidelity, error) {
	f := Fidelity{Encoding: e.cfg.Encoding, Notes: len(p.Notes)}
	stream, st, err := e.Encode(p, Identity, nil)
	if err != nil {
		return f, fmt.Errorf("fidelity: %w", err)
	}
	f.Stats = st
	ids := make([]int32, len(stream))
	for i, t := range stream {
		ids[i] = t.ID
	}
	d := &Decoder{vocab: e.vocab}
	dp, err := d.Decode(ids)
	if err != nil {
		return f, fmt.Errorf("fidelity: decode: %w", err)
	}
	f.Decoded = len(dp.Notes)
	grid := e.cfg.Encoding == Grid
	gpq := int64(e.cfg.GridPerQuarter)
	e.clock.reset(p)
	metricGrid := grid && p.SMPTEFPS <= 0
	tpq := int64(max(p.TicksPerQuarter, 1))
	dk := int64(dp.TicksPerQuarter) / gpq

	orig := make([]fnote, 0, len(p.Notes))
	for _, n := range p.Notes {
		fn := fnote{drum: n.Drum, pitch: n.Pitch, on: n.Start, off: n.End, vel: n.Velocity}
		if grid {
			fn.on, fn.off = e.clock.seconds(float64(n.StartTick)), e.clock.seconds(float64(n.EndTick))
			// Common resolution: ticks × grid steps per quarter, so a step is tpq units.
			fn.onQ, fn.offQ = n.StartTick*gpq, n.EndTick*gpq
			steps := (fn.offQ - fn.onQ) / tpq
			fn.onGrid = metricGrid && !(n.Drum && e.cfg.Drums == DrumsDrop) && fn.onQ%tpq == 0 && fn.offQ%tpq == 0 && steps >= 1 && steps <= int64(e.cfg.MaxDurationSteps)
			if fn.onGrid {
				f.OnGrid++
			}
		}
		orig = append(orig, fn)
	}
	dec := make([]fnote, 0, len(dp.Notes))
	for _, n := range dp.Notes {
		fn := fnote{drum: n.Drum, pitch: n.Pitch, on: n.Start, off: n.End, vel: n.Velocity}
		if grid {
			s0, s1 := n.StartTick/dk, n.EndTick/dk // grid steps
			fn.onQ, fn.offQ = s0*tpq, s1*tpq
			fn.on = e.clock.seconds(float64(s0) * e.clock.tpq / float64(gpq))
			fn.off = e.clock.seconds(float64(s1) * e.clock.tpq / float64(gpq))
		}
		dec = append(dec, fn)
	}
	byKey := func(a, b fnote) int {
		if a.drum != b.drum {
			if a.drum {
				return 1
			}
			return -1
		}
		return cmp.Or(cmp.Compare(a.pitch, b.pitch), cmp.Compare(a.on, b.on), cmp.Compare(b.off, a.off))
	}
	slices.SortFunc(orig, byKey)
	slices.SortFunc(dec, byKey)

	half := float64(e.cfg.ShiftMS) / 2
	tol := math.Max(4*half, 50) / 1000
	if grid {
		tol = 0.1 // seconds (SMPTE files on the grid)
	}
	counts := make([]int, len(onsetBuckets)+1)
	var sumOnset float64
	i, j := 0, 0
	for i < len(orig) && j < len(dec) {
		o, dn := orig[i], dec[j]
		if c := cmp.Or(boolCmp(o.drum, dn.drum), cmp.Compare(o.pitch, dn.pitch)); c != 0 {
			if c < 0 {
				i++
			} else {
				j++
			}
			continue
		}
		far := math.Abs(o.on-dn.on) > tol
		if metricGrid {
			far = abs64(o.onQ-dn.onQ) > tpq // more than one grid step
		}
		if far {
			if dn.on < o.on {
				j++
			} else {
				i++
			}
			continue
		}
		// Pair each decoded note with the nearest piece note of its key: a note merged
		// into another is lost, not matched to the next decoded note.
		if i+1 < len(orig) && sameKey(orig[i+1], dn) && math.Abs(orig[i+1].on-dn.on) < math.Abs(o.on-dn.on) {
			i++
			continue
		}
		if j+1 < len(dec) && sameKey(o, dec[j+1]) && math.Abs(dec[j+1].on-o.on) < math.Abs(dn.on-o.on) {
			j++
			continue
		}
		i++
		j++
		f.Matched++
		onErr := math.Abs(o.on-dn.on) * 1000
		offErr := math.Abs(o.off-dn.off) * 1000
		if o.drum && !grid {
			offErr = 0
		}
		sumOnset += onErr
		f.MaxOnsetMS = math.Max(f.MaxOnsetMS, onErr)
		f.MaxReleaseMS = math.Max(f.MaxReleaseMS, offErr)
		b := 0
		for b < len(onsetBuckets) && onErr > onsetBuckets[b] {
			b++
		}
		counts[b]++
		velBin := e.vocab.velBin(o.vel) == e.vocab.velBin(dn.vel)
		var timing bool
		switch {
		case metricGrid:
			timing = o.onQ == dn.onQ && (o.offQ-o.onQ) == (dn.offQ-dn.onQ)
		case grid:
			timing = onErr <= 0.5 && offErr <= 0.5
		default:
			timing = onErr <= 0.5 && offErr <= 0.5
		}
		if timing && o.onGrid {
			f.OnGridExact++
		}
		if timing {
			f.ExactTiming++
			if o.vel == dn.vel {
				f.Exact++
			}
		}
		bound := timing
		if !grid {
			const eps = 1e-6 // float rounding of seconds
			bound = onErr <= half+eps && offErr <= half+eps
		}
		if bound && velBin {
			f.WithinBound++
		}
	}
	if f.Matched > 0 {
		f.MeanOnsetMS = sumOnset / float64(f.Matched)
	}
	f.OnsetErrors = make([]ErrorBucket, len(counts))
	for b := range counts {
		up := -1.0
		if b < len(onsetBuckets) {
			up = onsetBuckets[b]
		}
		f.OnsetErrors[b] = ErrorBucket{UpToMS: up, Notes: counts[b]}
	}
	return f, nil
}

func boolCmp(a, b bool) int {
	switch {
	case a == b:
		return 0
	case !a:
		return -1
	}
	return 1
}

func abs64(x int64) int64 {
	if x < 0 {
		return -x
	}
	return x
}

func sameKey(a, b fnote) bool { return a.drum == b.drum && a.pitch == b.pitch }

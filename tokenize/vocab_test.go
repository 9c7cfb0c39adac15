package tokenize

import (
	"strings"
	"testing"
)

func TestPerformanceVocab(t *testing.T) {
	v, err := NewVocab(DefaultConfig())
	if err != nil {
		t.Fatal(err)
	}
	counts := map[Kind]int{}
	for id := int32(3); id < int32(v.Size()); id++ {
		e, _ := v.Entry(id)
		counts[e.Kind]++
	}
	// Huang et al. 2018 (Music Transformer), after Oore et al. 2018: 388 events =
	// 128 note-on + 128 note-off + 100 time-shifts + 32 velocities.
	want := map[Kind]int{KindNoteOn: 128, KindNoteOff: 128, KindShift: 100, KindVelocity: 32}
	if v.Size()-3 != 388 || len(counts) != len(want) {
		t.Fatalf("%d event tokens %v, want 388 %v", v.Size()-3, counts, want)
	}
	for k, n := range want {
		if counts[k] != n {
			t.Errorf("%s: %d tokens, want %d", k, counts[k], n)
		}
	}
	// Special tokens first: pad = 0, then begin and end of sequence.
	for id, l := range []string{"pad", "begin", "end"} {
		if got := v.Label(int32(id)); got != l {
			t.Errorf("id %d: %q, want %q", id, got, l)
		}
	}
	// Time-shifts from 10 ms to 1 s in 10 ms steps (Oore et al. 2018).
	first, _ := v.Lookup("dt.10")
	last, _ := v.Lookup("dt.1000")
	if last-first != 99 {
		t.Errorf("dt.10 at %d, dt.1000 at %d: want 100 consecutive shifts", first, last)
	}
	if got := v.Label(9999); got != "?9999" {
		t.Errorf("label of an unknown id: %q", got)
	}
	// Drums kept: 128 hit tokens after the 388.
	c := DefaultConfig()
	c.Drums = DrumsKeep
	if v2, _ := NewVocab(c); v2.Size() != 3+388+128 {
		t.Errorf("with drums: %d ids, want %d", v2.Size(), 3+388+128)
	}
}

func TestVelocityBins(t *testing.T) {
	for _, bins := range []int{1, 7, 32, 128} {
		c := DefaultConfig()
		c.VelocityBins = bins
		v, err := NewVocab(c)
		if err != nil {
			t.Fatal(err)
		}
		for vel := 1; vel <= 127; vel++ {
			b := v.velBin(uint8(vel))
			if b < 0 || b >= bins {
				t.Fatalf("bins %d: velocity %d in bin %d", bins, vel, b)
			}
			d := v.velValue(b)
			if v.velBin(d) != b || d < 1 || d > 127 {
				t.Fatalf("bins %d: bin %d decodes to %d, outside it", bins, b, d)
			}
		}
	}
}

func TestGridVocab(t *testing.T) {
	v, err := NewVocab(gridConfig())
	if err != nil {
		t.Fatal(err)
	}
	counts := map[Kind]int{}
	for id := int32(0); id < int32(v.Size()); id++ {
		e, _ := v.Entry(id)
		counts[e.Kind]++
	}
	// 16 General MIDI 1 program families plus drums; 12 steps per quarter up to a
	// 12-quarter bar is 144 positions.
	want := map[Kind]int{KindSpecial: 3, KindBar: 1, KindMeter: 50, KindTempo: 32, KindPosition: 144, KindInst: 17,
		KindPitch: 128, KindDuration: 96, KindVelocity: 32}
	for k, n := range want {
		if counts[k] != n {
			t.Errorf("%s: %d tokens, want %d", k, counts[k], n)
		}
	}
	for _, l := range []string{"meter.4/4", "meter.3/4", "meter.6/8", "meter.7/8", "meter.5/4", "meter.2/2", "inst.piano", "inst.drums"} {
		if _, ok := v.Lookup(l); !ok {
			t.Errorf("no %s token", l)
		}
	}
}

func TestConfigValidate(t *testing.T) {
	tests := []struct {
		name string
		mod  func(*Config)
		want string // part of the error; "" for valid
	}{
		{"default", func(*Config) {}, ""},
		{"grid default", func(c *Config) { c.Encoding = Grid }, ""},
		{"unknown encoding", func(c *Config) { c.Encoding = "remi" }, `encoding "remi"`},
		{"drums", func(c *Config) { c.Drums = "mute" }, `drums "mute"`},
		{"shift not dividing", func(c *Config) { c.MaxShiftMS = 995 }, "max_shift_ms 995"},
		{"zero shift", func(c *Config) { c.ShiftMS = 0 }, "shift_ms 0"},
		{"velocity bins", func(c *Config) { c.VelocityBins = 200 }, "velocity_bins 200"},
		{"stride past max_len", func(c *Config) { c.Stride = 4096 }, "stride 4096"},
		{"min_len past max_len", func(c *Config) { c.MinLen = 4096 }, "min_len 4096"},
		{"tiny max_len", func(c *Config) { c.MaxLen = 4 }, "max_len 4"},
		{"transpose twice", func(c *Config) { c.Transpose = []int{0, 2, 2} }, "transpose 2: listed twice"},
		{"stretch range", func(c *Config) { c.Stretch = []float64{1, 9} }, "stretch 9"},
		{"stretch with grid", func(c *Config) { c.Encoding = Grid; c.Stretch = []float64{1, 1.1} }, "applies only to the performance"},
		{"grid per quarter", func(c *Config) { c.Encoding = Grid; c.GridPerQuarter = 0 }, "grid_per_quarter 0"},
		{"tempo range", func(c *Config) { c.Encoding = Grid; c.TempoMinBPM = 300 }, "tempo_min_bpm 300"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := DefaultConfig()
			tc.mod(&c)
			err := c.Validate()
			switch {
			case tc.want == "" && err != nil:
				t.Errorf("unexpected error %v", err)
			case tc.want != "" && (err == nil || !strings.Contains(err.Error(), tc.want)):
				t.Errorf("got %v, want an error containing %q", err, tc.want)
			}
		})
	}
}

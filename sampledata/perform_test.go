package sampledata

import (
	"slices"
	"testing"

	"github.com/relshard/relshard/ingest"
)

// TestPerformTiming checks the human timing doc.go promises: per piece an onset spread
// of a few to tens of ms, never beyond three deviations of 22 ms plus the 12 ms melody
// lead, and the sustain pedal in most pieces.
func TestPerformTiming(t *testing.T) {
	pedalled := 0
	const pieces = 40
	for seed := uint64(0); seed < pieces; seed++ {
		r := newRNG(seed, 1)
		s, bars := scorePerformance(r)
		ppq := pick(r, performancePPQs)
		s.resample(ppq)
		var before [][]note
		for _, p := range s.parts {
			before = append(before, slices.Clone(p.notes))
		}
		perform(r, s, bars, ppq, 0)
		var sumAbs, n int64
		var worst int64
		for pi, p := range s.parts {
			for i, after := range p.notes {
				b := before[pi][i]
				ms := (after.start - b.start) * s.usAt(b.start) / ppq / 1000
				if b.start == 0 && after.start == 0 {
					continue // clamped at the start of the piece
				}
				sumAbs += max(ms, -ms)
				worst = max(worst, max(ms, -ms))
				n++
			}
		}
		mean := sumAbs / n
		if mean < 3 || mean > 40 {
			t.Errorf("seed %d: mean onset displacement %d ms, want a few to tens of ms", seed, mean)
		}
		if worst > 3*22+12+2 {
			t.Errorf("seed %d: an onset moved %d ms, beyond 3 × 22 + 12 ms", seed, worst)
		}
		for _, p := range s.parts {
			for _, c := range p.ccs {
				if c.num == ccSustain {
					pedalled++
					break
				}
			}
		}
	}
	if pedalled < pieces*6/10 {
		t.Errorf("%d of %d performances use the sustain pedal, want most (85%% expected)", pedalled, pieces)
	}
}

// TestSMPTETiming checks the time-code conversion against its definition in SMF 1.0
// ("Header Chunks": SMPTE delta times are subdivisions of a second, frames per second ×
// ticks per frame) as read back by ingest: each note starts, in seconds, where the
// score's tempo map puts it, to within one tick.
func TestSMPTETiming(t *testing.T) {
	for _, d := range smpteDivisions {
		r := newRNG(uint64(d[0]*100+d[1]), 2)
		sc := composePerformance(r, quarter)
		p := &piece{kind: KindTimecode, slug: "t", scores: []*score{sc}, lay: layout{format: 1, fps: d[0], tpf: d[1]}}
		data, err := render(p)
		if err != nil {
			t.Fatal(err)
		}
		ps, err := ingest.Parse("t.mid", data, ingest.ParseOptions{})
		if err != nil {
			t.Fatalf("%v: %v", d, err)
		}
		var want []float64 // µs of each onset through the tempo map
		for _, pt := range sc.parts {
			for _, n := range pt.notes {
				want = append(want, float64(microsAt(sc, n.start))/1e6)
			}
		}
		var got []float64
		for _, n := range ps[0].Notes {
			got = append(got, n.Start)
		}
		slices.Sort(want)
		slices.Sort(got)
		if len(got) != len(want) {
			t.Fatalf("%v: ingest reads %d notes, score has %d", d, len(got), len(want))
		}
		fps := float64(d[0])
		if d[0] == 29 {
			fps = 30000.0 / 1001 // drop-frame 30, SMPTE 12M
		}
		tick := 1 / (fps * float64(d[1]))
		for i := range got {
			if diff := got[i] - want[i]; diff > tick+1e-9 || diff < -tick-1e-9 {
				t.Errorf("%v: onset %d at %.6f s, want %.6f s (± one tick, %.6f s)", d, i, got[i], want[i], tick)
				break
			}
		}
	}
}

// microsAt is the score time of tick t in µs through the tempo map, by summing beat by
// beat (a second, independent way to do what timeConv does).
func microsAt(s *score, t int64) int64 {
	var us, last int64
	cur := int64(500_000)
	for _, tc := range s.tempos {
		if tc.tick >= t {
			break
		}
		us += (tc.tick - last) * cur / s.ppq
		last, cur = tc.tick, tc.us
	}
	return us + (t-last)*cur/s.ppq
}

// FuzzFile generates single files of random (seed, index) and checks that ingest
// reads each without error or warning, with as many notes as note-ons were written.
func FuzzFile(f *testing.F) {
	for _, s := range [][2]uint64{{1, 0}, {1, 5}, {1, 6}, {2, 17}, {3, 123}, {4, 4000}} {
		f.Add(s[0], s[1])
	}
	f.Fuzz(func(t *testing.T, seed, index uint64) {
		i := int(index % 100_000)
		file, err := makeFile(Config{Files: i + 1, Seed: seed}, i)
		if err != nil {
			t.Fatal(err)
		}
		ps, err := ingest.Parse(file.Path, file.Data, ingest.ParseOptions{})
		if err != nil {
			t.Fatalf("%s (seed %d): %v", file.Path, seed, err)
		}
		notes := 0
		for _, p := range ps {
			notes += len(p.Notes)
			if len(p.Warnings) != 0 {
				t.Errorf("%s (seed %d): warnings %v", file.Path, seed, p.Warnings)
			}
		}
		if notes == 0 || notes != countNoteOns(file.Data) {
			t.Errorf("%s (seed %d): ingest pairs %d notes, %d note-ons written", file.Path, seed, notes, countNoteOns(file.Data))
		}
	})
}

// countNoteOns counts note-ons with a velocity in a file this package wrote, walking
// its tracks by SMF 1.0's event grammar (running status, meta and SysEx lengths).
func countNoteOns(b []byte) int {
	n := 0
	for p := 14; p+8 <= len(b); {
		end := p + 8 + int(uint32(b[p+4])<<24|uint32(b[p+5])<<16|uint32(b[p+6])<<8|uint32(b[p+7]))
		q := p + 8
		var status byte
		for q < end {
			for b[q]&0x80 != 0 { // delta time
				q++
			}
			q++
			if b[q]&0x80 != 0 {
				status = b[q]
				q++
			}
			switch {
			case status == 0xFF:
				q++ // type
				fallthrough
			case status == 0xF0 || status == 0xF7:
				l := 0
				for b[q]&0x80 != 0 {
					l = l<<7 | int(b[q]&0x7F)
					q++
				}
				l = l<<7 | int(b[q])
				q += 1 + l
				status = 0
			case status&0xF0 == 0xC0 || status&0xF0 == 0xD0:
				q++
			default:
				if status&0xF0 == 0x90 && b[q+1] != 0 {
					n++
				}
				q += 2
			}
		}
		p = end
	}
	return n
}

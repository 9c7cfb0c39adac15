package sampledata_test

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"slices"
	"testing"

	"github.com/relshard/relshard/sampledata"
	"gitlab.com/gomidi/midi/v2/smf"
)

// fileStats is what the statistics test measures of one file, read with gomidi's
// reader (an independent implementation of SMF 1.0).
type fileStats struct {
	kind        string
	format      int
	ppq         int // 0 for SMPTE division
	noteOns     int
	drumNotes   int
	badDrumKeys int // drum notes outside General MIDI 1's percussion keys
	offGrid     int // onsets off the 1/12-beat grid
	offGridEnds int // note ends off the 1/24-beat grid
	swungOnsets int // onsets two thirds into a beat
	tempos      []float64
	pedal       bool
	meters      []string
	melodySteps int // successive melody intervals of at most 2 semitones
	melodyMoves int // successive melody intervals
	programs    map[uint8]bool
	minVel      uint8
	maxVel      uint8
	pitched     int // non-drum note-ons
	inKey       int // of which in the scale of the key signature in effect
}

// scaleOf returns the pitch classes of the key a Key Signature names (SMF 1.0: sf
// sharps, or flats when negative, and mi 1 for minor): the major scale, or for minor
// the natural minor scale plus the raised seventh of harmonic minor (common practice).
func scaleOf(sf int8, minor bool) [12]bool {
	tonic := (int(sf)*7%12 + 12) % 12 // each sharp a fifth up (common practice)
	steps := []int{0, 2, 4, 5, 7, 9, 11}
	if minor {
		tonic = (tonic + 9) % 12 // the relative minor
		steps = []int{0, 2, 3, 5, 7, 8, 10, 11}
	}
	var in [12]bool
	for _, st := range steps {
		in[(tonic+st)%12] = true
	}
	return in
}

// readStats reads a metrical-division file with gomidi.
func readStats(t *testing.T, f sampledata.File) fileStats {
	t.Helper()
	sm, err := smf.ReadFrom(bytes.NewReader(f.Data))
	if err != nil {
		t.Fatalf("%s: gomidi smf.ReadFrom: %v", f.Path, err)
	}
	st := fileStats{kind: f.Kind, format: int(sm.Format()), programs: map[uint8]bool{}, minVel: 127}
	mt, ok := sm.TimeFormat.(smf.MetricTicks)
	if !ok {
		t.Fatalf("%s: gomidi reads division %v, want metrical", f.Path, sm.TimeFormat)
	}
	st.ppq = int(mt.Resolution())
	grid := int64(st.ppq / 12) // sixteenths, sixteenth triplets and swung eighths fall on it
	var scale [12]bool
	for _, tr := range sm.Tracks {
		var tick int64
		var name string
		var lastMel int = -1
		for _, ev := range tr {
			tick += int64(ev.Delta)
			msg := ev.Message
			var ch, k, v uint8
			var bpm float64
			var num, den uint8
			if len(msg) == 5 && msg[0] == 0xFF && msg[1] == 0x59 { // Key Signature: FF 59 02 sf mi
				scale = scaleOf(int8(msg[3]), msg[4] == 1)
				continue
			}
			switch {
			case msg.GetMetaTrackName(&name):
			case msg.GetMetaTempo(&bpm):
				st.tempos = append(st.tempos, bpm)
			case msg.GetMetaMeter(&num, &den):
				st.meters = append(st.meters, fmt.Sprintf("%d/%d", num, den))
			case msg.GetNoteStart(&ch, &k, &v):
				st.noteOns++
				st.minVel, st.maxVel = min(st.minVel, v), max(st.maxVel, v)
				if tick%grid != 0 {
					st.offGrid++
				}
				if tick%int64(st.ppq) == int64(st.ppq*2/3) {
					st.swungOnsets++
				}
				if ch != 9 {
					st.pitched++
					if scale[k%12] {
						st.inKey++
					}
				}
				if ch == 9 {
					st.drumNotes++
					// General MIDI 1 percussion map: keys 35 (Acoustic Bass Drum) to 81
					// (Open Triangle) (from memory of the GM1 sound set).
					if k < 35 || k > 81 {
						st.badDrumKeys++
					}
				}
				if name == "melody" && st.format == 1 {
					if lastMel >= 0 {
						st.melodyMoves++
						if d := int(k) - lastMel; d >= -2 && d <= 2 {
							st.melodySteps++
						}
					}
					lastMel = int(k)
				}
			case msg.GetNoteEnd(&ch, &k):
				if tick%int64(st.ppq/24) != 0 {
					st.offGridEnds++
				}
			case msg.GetControlChange(&ch, &k, &v):
				if k == 64 { // sustain pedal, MIDI 1.0 control 64
					st.pedal = true
				}
			case msg.GetProgramChange(&ch, &k):
				st.programs[k] = true
			}
		}
	}
	return st
}

// smpteHeader reads the division of a file's header: SMF 1.0 "Header Chunks", bit 15
// of <division> set means SMPTE format, the upper byte the negative frame rate.
func smpteHeader(data []byte) (fps, tpf int, ok bool) {
	if len(data) < 14 {
		return 0, 0, false
	}
	div := binary.BigEndian.Uint16(data[12:])
	if div&0x8000 == 0 {
		return 0, 0, false
	}
	return -int(int8(div >> 8)), int(div & 0xFF), true
}

func between(t *testing.T, what string, got, lo, hi float64) {
	t.Helper()
	if got < lo || got > hi {
		t.Errorf("%s = %.3f, want within [%.3f, %.3f] (the range promised in doc.go)", what, got, lo, hi)
	}
}

// TestSampleStatistics checks the numbers doc.go promises on a 500-file sample, read
// with gomidi's reader.
func TestSampleStatistics(t *testing.T) {
	files := sample(t)
	var (
		n, drumFiles, perfTimed, fmt0, fmt2, smpte, pedalPerf, perf int
		ppqs                                                        = map[int]int{}
		metrical                                                    int
		firstTempos                                                 []float64
		meters                                                      = map[string]bool{}
		meterChanges, swung, melodySteps, melodyMoves, badDrum      int
		pitched, inKey                                              int
		transposed, resaved                                         int
	)
	for _, f := range files {
		n++
		switch f.Kind {
		case sampledata.KindTransposed:
			transposed++
		case sampledata.KindResaved:
			resaved++
		}
		if fps, tpf, ok := smpteHeader(f.Data); ok {
			// gomidi v2.3.23's reader panics on SMPTE division (it asserts metric ticks
			// when it builds its tempo map), so these files are checked by midicsv and by
			// ingest in the other tests.
			smpte++
			perfTimed++
			if f.Kind != sampledata.KindTimecode {
				t.Errorf("%s: SMPTE division but kind %s", f.Path, f.Kind)
			}
			if !slices.Contains([]int{24, 25, 29, 30}, fps) || tpf == 0 {
				t.Errorf("%s: SMPTE division %d fps × %d, want 24/25/29/30 (SMF 1.0)", f.Path, fps, tpf)
			}
			continue
		}
		st := readStats(t, f)
		metrical++
		ppqs[st.ppq]++
		switch st.format {
		case 0:
			fmt0++
		case 2:
			fmt2++
		}
		if st.drumNotes > 0 {
			drumFiles++
		}
		badDrum += st.badDrumKeys
		if len(st.tempos) == 0 {
			t.Errorf("%s: no tempo event", f.Path)
		} else {
			firstTempos = append(firstTempos, st.tempos[0])
		}
		for _, bpm := range st.tempos {
			if bpm < 39.999 || bpm > 240.001 {
				t.Errorf("%s: tempo %.2f BPM outside 40..240", f.Path, bpm)
			}
		}
		for _, m := range st.meters {
			meters[m] = true
		}
		if st.format != 2 && len(slices.Compact(slices.Clone(st.meters))) > 1 {
			meterChanges++
		}
		if st.swungOnsets > st.noteOns/10 {
			swung++
		}
		pitched += st.pitched
		inKey += st.inKey
		melodySteps += st.melodySteps
		melodyMoves += st.melodyMoves
		offShare := float64(st.offGrid) / float64(max(1, st.noteOns))
		timed := offShare > 0.5
		if timed {
			perfTimed++
		}
		if f.Kind == sampledata.KindPerformance {
			perf++
			if st.pedal {
				pedalPerf++
			}
			if !timed {
				t.Errorf("%s: performance with only %.0f%% of onsets off the grid", f.Path, 100*offShare)
			}
			if st.maxVel-st.minVel < 20 {
				t.Errorf("%s: performance velocities %d..%d, want dynamics spanning at least 20", f.Path, st.minVel, st.maxVel)
			}
		}
		// A transposed file may copy a performance or a quantized piece.
		if f.Kind != sampledata.KindPerformance && f.Kind != sampledata.KindTransposed && (st.offGrid != 0 || st.offGridEnds != 0) {
			t.Errorf("%s: quantized kind %s has %d onsets off the 1/12-beat grid, %d note ends off the 1/24-beat grid",
				f.Path, f.Kind, st.offGrid, st.offGridEnds)
		}
		if st.noteOns == 0 {
			t.Errorf("%s: no notes", f.Path)
		}
		if f.Kind == sampledata.KindEnsemble && len(st.programs) < 3 {
			t.Errorf("%s: ensemble with %d General MIDI programs, want at least 3", f.Path, len(st.programs))
		}
	}
	share := func(k int) float64 { return float64(k) / float64(n) }
	t.Logf("%d files: drums %.3f, performance-timed %.3f, format 0 %.3f, format 2 %d, SMPTE %d, PPQ %v, meters %v, meter changes %d, swung %d, melody steps %.3f, in key %.3f, transposed %d, resaved %d",
		n, share(drumFiles), share(perfTimed), share(fmt0), fmt2, smpte, ppqs, meters, meterChanges, swung,
		float64(melodySteps)/float64(melodyMoves), float64(inKey)/float64(pitched), transposed, resaved)

	// The promises of doc.go, "Statistics".
	between(t, "share of files with drums", share(drumFiles), 0.52, 0.72)
	between(t, "share of performance-timed files", share(perfTimed), 0.26, 0.42)
	between(t, "share of format-0 files", share(fmt0), 0.14, 0.28)
	between(t, "share of transposed near-duplicates", share(transposed), 0.03, 0.09)
	between(t, "share of resaved near-duplicates", share(resaved), 0.01, 0.05)
	if fmt2 == 0 || smpte == 0 {
		t.Errorf("format-2 files %d, SMPTE files %d: want at least one of each", fmt2, smpte)
	}
	for _, ppq := range []int{96, 384, 480, 960} {
		lo, hi := 0.20, 0.36
		if ppq == 96 {
			lo, hi = 0.10, 0.24
		}
		between(t, fmt.Sprintf("share of metrical files at PPQ %d", ppq), float64(ppqs[ppq])/float64(metrical), lo, hi)
	}
	for ppq := range ppqs {
		if !slices.Contains([]int{96, 384, 480, 960}, ppq) {
			t.Errorf("PPQ %d used; want only 96, 384, 480, 960", ppq)
		}
	}
	slices.Sort(firstTempos)
	between(t, "median initial tempo (BPM)", firstTempos[len(firstTempos)/2], 90, 130)
	between(t, "share of performances with sustain pedal", float64(pedalPerf)/float64(perf), 0.75, 0.95)
	between(t, "share of melody intervals of at most 2 semitones", float64(melodySteps)/float64(melodyMoves), 0.55, 0.95)
	between(t, "share of pitched notes in the key signature's scale", float64(inKey)/float64(pitched), 0.95, 1)
	for _, m := range []string{"3/4", "6/8", "7/8", "4/4", "2/4", "5/4", "12/8"} {
		if !meters[m] {
			t.Errorf("no file in %s", m)
		}
	}
	if meterChanges == 0 || swung == 0 {
		t.Errorf("files with a meter change %d, swung files %d: want at least one of each", meterChanges, swung)
	}
	if badDrum != 0 {
		t.Errorf("%d drum notes outside the General MIDI 1 percussion keys 35..81", badDrum)
	}
}

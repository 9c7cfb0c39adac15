package ingest

import (
	"bufio"
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// TestMidicsv compares Parse with an independent parser on real files made by others:
// Debian's midicsv (package midicsv) on every .mid of Debian's openttd-openmsx. From
// midicsv's CSV the test pairs notes itself, with the rules documented in notes.go
// (per track, channel and pitch; Note_on_c with velocity 0 and Note_off_c end a
// note; a repeated note-on ends the earlier note; notes open at End_track end
// there) and compares count, ticks, pitches, channels, velocities and tracks of the
// notes, the tempo events, the time signatures and each track's end.
func TestMidicsv(t *testing.T) {
	bin, err := exec.LookPath("midicsv")
	if err != nil {
		requireRefs(t, "midicsv not found: install Debian's midicsv package")
	}
	paths := openttdPaths()
	if len(paths) == 0 {
		requireRefs(t, "no .mid files in %s: install Debian's openttd-openmsx package", openttdDir)
	}
	for _, path := range paths {
		t.Run(filepath.Base(path), func(t *testing.T) {
			out, err := exec.Command(bin, path).Output()
			if err != nil {
				t.Fatalf("midicsv: %v", err)
			}
			want := fromCSV(t, out)
			data, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			ps, err := Parse(path, data, ParseOptions{Pedal: false})
			if err != nil {
				t.Fatal(err)
			}
			if len(ps) != 1 {
				t.Fatalf("%d pieces", len(ps))
			}
			p := ps[0]
			got := csvFacts{TicksPerQuarter: p.TicksPerQuarter, Tempos: p.Tempos, Meters: p.Meters, EndTick: p.EndTick}
			for _, n := range p.Notes {
				got.Notes = append(got.Notes, csvNote{n.Track, n.Channel, n.Pitch, n.Velocity, n.StartTick, n.EndTick})
			}
			slices.SortStableFunc(got.Notes, compareCSVNotes)
			if got.TicksPerQuarter != want.TicksPerQuarter || got.EndTick != want.EndTick {
				t.Errorf("ticks per quarter %d, end %d; midicsv %d, %d", got.TicksPerQuarter, got.EndTick, want.TicksPerQuarter, want.EndTick)
			}
			if len(got.Notes) != len(want.Notes) {
				t.Errorf("%d notes, midicsv pairs %d", len(got.Notes), len(want.Notes))
			}
			for i := range min(len(got.Notes), len(want.Notes)) {
				if got.Notes[i] != want.Notes[i] {
					t.Fatalf("note %d: %+v, midicsv %+v", i, got.Notes[i], want.Notes[i])
				}
			}
			if !reflect.DeepEqual(got.Tempos, want.Tempos) {
				t.Errorf("tempos\n got %v\nwant %v", got.Tempos, want.Tempos)
			}
			if !reflect.DeepEqual(got.Meters, want.Meters) {
				t.Errorf("meters\n got %v\nwant %v", got.Meters, want.Meters)
			}
		})
	}
}

type csvNote struct {
	Track      int
	Channel    uint8
	Pitch      uint8
	Velocity   uint8
	Start, End int64
}

func compareCSVNotes(a, b csvNote) int {
	for _, d := range []int64{
		a.Start - b.Start, int64(a.Track - b.Track), int64(a.Channel) - int64(b.Channel),
		int64(a.Pitch) - int64(b.Pitch), a.End - b.End, int64(a.Velocity) - int64(b.Velocity),
	} {
		if d != 0 {
			return int(max(-1, min(1, d)))
		}
	}
	return 0
}

type csvFacts struct {
	TicksPerQuarter int
	Notes           []csvNote
	Tempos          []Tempo
	Meters          []Meter
	EndTick         int64
}

// fromCSV reads midicsv output (midicsv(1): "Track, Time, Type, params...", track 0
// is the header, file tracks count from 1) and pairs its notes.
func fromCSV(t *testing.T, csv []byte) csvFacts {
	t.Helper()
	var f csvFacts
	type key struct {
		track     int
		ch, pitch int
	}
	open := map[key]int{} // index into f.Notes of the sounding note
	num := func(s string) int64 {
		v, err := strconv.ParseInt(strings.TrimSpace(s), 10, 64)
		if err != nil {
			t.Fatalf("midicsv field %q: %v", s, err)
		}
		return v
	}
	sc := bufio.NewScanner(bytes.NewReader(csv))
	sc.Buffer(nil, 1<<20)
	for sc.Scan() {
		fields := strings.SplitN(sc.Text(), ",", 8)
		if len(fields) < 3 {
			continue
		}
		typ := strings.TrimSpace(fields[2])
		switch typ {
		case "Header", "Note_on_c", "Note_off_c", "Tempo", "Time_signature", "End_track":
		default:
			continue
		}
		track := int(num(fields[0])) - 1 // midicsv numbers file tracks from 1
		tick := num(fields[1])
		switch typ {
		case "Header": // 0, 0, Header, format, nTracks, division
			f.TicksPerQuarter = int(num(fields[5]))
		case "Tempo":
			f.Tempos = append(f.Tempos, Tempo{Tick: tick, USPerQuarter: uint32(num(fields[3]))})
		case "Time_signature": // num, denominator as a power of two, clocks, 32nds
			f.Meters = append(f.Meters, Meter{Tick: tick, Num: uint8(num(fields[3])), Denom: 1 << num(fields[4])})
		case "End_track":
			for k, i := range open {
				if k.track == track {
					f.Notes[i].End = tick
					delete(open, k)
				}
			}
			f.EndTick = max(f.EndTick, tick)
		case "Note_on_c", "Note_off_c":
			ch, pitch, vel := int(num(fields[3])), int(num(fields[4])), int(num(fields[5]))
			k := key{track, ch, pitch}
			if i, ok := open[k]; ok {
				f.Notes[i].End = tick // a note-off, or a note-on that retriggers the pitch
				delete(open, k)
			}
			if typ == "Note_on_c" && vel > 0 {
				open[k] = len(f.Notes)
				f.Notes = append(f.Notes, csvNote{track, uint8(ch), uint8(pitch), uint8(vel), tick, -1})
			}
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	slices.SortStableFunc(f.Tempos, func(a, b Tempo) int { return int(max(-1, min(1, a.Tick-b.Tick))) })
	slices.SortStableFunc(f.Meters, func(a, b Meter) int { return int(max(-1, min(1, a.Tick-b.Tick))) })
	slices.SortStableFunc(f.Notes, compareCSVNotes)
	return f
}

package main

import (
	"bufio"
	"bytes"
	"encoding/json"
	"fmt"
	"os/exec"
	"path/filepath"
	"reflect"
	"slices"
	"sort"
	"strconv"
	"strings"
	"testing"

	"github.com/relshard/relshard/ingest/ingesttest"
)

// TestNotesJSONFields: relshard notes --json prints an object with exactly the
// documented fields, and each note exactly its ten fields.
func TestNotesJSONFields(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "x.mid.gz")
	x := ingesttest.SMF(t, 96, false, []ingesttest.Note{note(0, 96, 60, 0), note(96, 48, 38, 9)})
	ingesttest.WriteFiles(t, dir, map[string][]byte{"x.mid.gz": ingesttest.Gzip(t, x)})
	code, out, errOut := runCmd(t, "notes", "--json", p)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	var top map[string]json.RawMessage
	if err := json.Unmarshal([]byte(out), &top); err != nil {
		t.Fatal(err)
	}
	if got, want := slices.Sorted(mapKeys(top)), []string{"notes", "tempos", "ticks_per_quarter", "warnings"}; !reflect.DeepEqual(got, want) {
		t.Errorf("fields %v, want %v", got, want)
	}
	var notes []map[string]any
	json.Unmarshal(top["notes"], &notes)
	wantNote := []string{"channel", "drum", "end_s", "end_tick", "pitch", "program", "start_s", "start_tick", "track", "velocity"}
	if len(notes) != 2 || !reflect.DeepEqual(slices.Sorted(mapKeys(notes[0])), wantNote) {
		t.Fatalf("notes %v", notes)
	}
	// SMF 1.0 default tempo, 120 BPM: tick 96 at 96 PPQ is 0.5 s.
	want := []map[string]any{
		{"track": 0.0, "channel": 0.0, "program": 0.0, "pitch": 60.0, "velocity": 100.0, "start_tick": 0.0, "end_tick": 96.0, "start_s": 0.0, "end_s": 0.5, "drum": false},
		{"track": 0.0, "channel": 9.0, "program": 0.0, "pitch": 38.0, "velocity": 100.0, "start_tick": 96.0, "end_tick": 144.0, "start_s": 0.5, "end_s": 0.75, "drum": true},
	}
	if !reflect.DeepEqual(notes, want) {
		t.Errorf("notes\n got %v\nwant %v", notes, want)
	}
	if string(top["tempos"]) != "[]" || string(top["ticks_per_quarter"]) != "96" {
		t.Errorf("tempos %s, ticks_per_quarter %s", top["tempos"], top["ticks_per_quarter"])
	}
	// The table form, and the errors.
	if code, out, _ := runCmd(t, "notes", p); code != exitOK || !strings.Contains(out, "tempo map:") || !strings.Contains(out, "D2") {
		t.Errorf("table: exit %d\n%s", code, out)
	}
	ingesttest.WriteFiles(t, dir, map[string][]byte{"bad.mid": []byte("MThd\x00\x00\x00\x06\x00")})
	if code, _, errOut := runCmd(t, "notes", filepath.Join(dir, "bad.mid")); code != exitFailed || !strings.Contains(errOut, "bad.mid") {
		t.Errorf("bad file: exit %d, %q", code, errOut)
	}
	if code, _, _ := runCmd(t, "notes"); code != exitUsage {
		t.Errorf("no file: exit %d", code)
	}
}

func mapKeys[V any](m map[string]V) func(func(string) bool) {
	return func(yield func(string) bool) {
		for k := range m {
			if !yield(k) {
				return
			}
		}
	}
}

// csvNote is a note derived from midicsv's CSV, in the fields the comparison covers.
type csvNote struct {
	Track, Channel, Pitch, Velocity int
	Start, End                      int64
}

// midicsvNotes runs Debian's midicsv on a file and pairs its Note_on_c/Note_off_c
// records per (track, channel, key) with relshard's documented policy: a note-on with
// velocity 0 is a note-off (SMF 1.0 / MIDI 1.0 running-status practice), a note-on of a
// sounding key ends the earlier note there, a note-off with no note sounding is
// ignored, and notes still sounding at End_track end there. midicsv numbers tracks from
// 1; relshard from 0.
func midicsvNotes(t *testing.T, file string) ([]csvNote, []tempoJSON) {
	t.Helper()
	out, err := exec.Command("midicsv", file).Output()
	if err != nil {
		t.Fatalf("midicsv %s: %v", file, err)
	}
	type key struct{ track, ch, pitch int }
	open := map[key]csvNote{}
	var notes []csvNote
	var tempos []tempoJSON
	sc := bufio.NewScanner(bytes.NewReader(out))
	sc.Buffer(nil, 1<<20)
	for sc.Scan() {
		f := strings.SplitN(sc.Text(), ", ", 4)
		if len(f) < 3 {
			continue
		}
		track, _ := strconv.Atoi(f[0])
		tick, _ := strconv.ParseInt(f[1], 10, 64)
		var nums []int
		if len(f) == 4 && (strings.HasPrefix(f[2], "Note_") || f[2] == "Tempo") {
			for _, s := range strings.Split(f[3], ", ") {
				n, err := strconv.Atoi(s)
				if err != nil {
					t.Fatalf("midicsv line %q: %v", sc.Text(), err)
				}
				nums = append(nums, n)
			}
		}
		tr := track - 1
		switch f[2] {
		case "Tempo":
			tempos = append(tempos, tempoJSON{tick, uint32(nums[0])})
		case "Note_on_c", "Note_off_c":
			k := key{tr, nums[0], nums[1]}
			n, sounding := open[k]
			if sounding {
				n.End = tick
				notes = append(notes, n)
				delete(open, k)
			}
			if f[2] == "Note_on_c" && nums[2] > 0 {
				open[k] = csvNote{tr, nums[0], nums[1], nums[2], tick, 0}
			}
		case "End_track":
			for k, n := range open {
				if k.track == tr {
					n.End = tick
					notes = append(notes, n)
					delete(open, k)
				}
			}
		}
	}
	return notes, tempos
}

func sortCSVNotes(ns []csvNote) {
	sort.Slice(ns, func(i, j int) bool {
		a, b := ns[i], ns[j]
		return fmt.Sprint(a.Start, a.Track, a.Channel, a.Pitch, a.End, a.Velocity) < fmt.Sprint(b.Start, b.Track, b.Channel, b.Pitch, b.End, b.Velocity)
	})
}

// TestNotesAgreesWithMidicsv: on every .mid of Debian's openttd-openmsx package,
// relshard notes --json --no-pedal gives the same notes (count, ticks, keys, channels,
// velocities, tracks) and the same tempo events as pairs derived from Debian's
// midicsv, an independent SMF parser.
func TestNotesAgreesWithMidicsv(t *testing.T) {
	needRef(t, openmsx, "openttd-openmsx")
	if _, err := exec.LookPath("midicsv"); err != nil {
		needRef(t, "/usr/bin/midicsv", "midicsv")
	}
	mids, _ := filepath.Glob(filepath.Join(openmsx, "*.mid"))
	if len(mids) == 0 {
		t.Fatalf("no .mid files in %s", openmsx)
	}
	for _, file := range mids {
		t.Run(filepath.Base(file), func(t *testing.T) {
			code, out, errOut := runCmd(t, "notes", "--json", "--no-pedal", file)
			if code != exitOK {
				t.Fatalf("exit %d: %s", code, errOut)
			}
			var got notesJSON
			if err := json.Unmarshal([]byte(out), &got); err != nil {
				t.Fatal(err)
			}
			var ours []csvNote
			for _, n := range got.Notes {
				ours = append(ours, csvNote{n.Track, int(n.Channel), int(n.Pitch), int(n.Velocity), n.StartTk, n.EndTk})
			}
			want, wantTempos := midicsvNotes(t, file)
			sortCSVNotes(ours)
			sortCSVNotes(want)
			if len(ours) != len(want) {
				t.Errorf("%d notes, midicsv pairs %d", len(ours), len(want))
			}
			for i := range min(len(ours), len(want)) {
				if ours[i] != want[i] {
					t.Errorf("note %d: ours %+v, midicsv %+v", i, ours[i], want[i])
					break
				}
			}
			sort.SliceStable(wantTempos, func(i, j int) bool { return wantTempos[i].Tick < wantTempos[j].Tick })
			if len(wantTempos) == 0 {
				wantTempos = []tempoJSON{}
			}
			if !reflect.DeepEqual(got.Tempos, wantTempos) {
				t.Errorf("tempos %v, midicsv %v", got.Tempos, wantTempos)
			}
		})
	}
}

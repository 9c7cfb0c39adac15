package ingest

import (
	"errors"
	"fmt"
	"math"
	"os"
	"reflect"
	"runtime"
	"sync"
	"testing"
)

// TestVLQTable checks every row of the variable-length quantity table of SMF 1.0
// ("Variable-length quantities", the table of numbers and their encodings): a note
// whose delta time is written with the table's bytes starts at the table's number.
func TestVLQTable(t *testing.T) {
	// SMF 1.0, "Variable-length quantities" table.
	table := []struct {
		value uint32
		bytes []byte
	}{
		{0x00000000, []byte{0x00}},
		{0x00000040, []byte{0x40}},
		{0x0000007F, []byte{0x7F}},
		{0x00000080, []byte{0x81, 0x00}},
		{0x00002000, []byte{0xC0, 0x00}},
		{0x00003FFF, []byte{0xFF, 0x7F}},
		{0x00004000, []byte{0x81, 0x80, 0x00}},
		{0x00100000, []byte{0xC0, 0x80, 0x00}},
		{0x001FFFFF, []byte{0xFF, 0xFF, 0x7F}},
		{0x00200000, []byte{0x81, 0x80, 0x80, 0x00}},
		{0x08000000, []byte{0xC0, 0x80, 0x80, 0x00}},
		{0x0FFFFFFF, []byte{0xFF, 0xFF, 0xFF, 0x7F}},
	}
	for _, row := range table {
		if got := vlq(row.value); !reflect.DeepEqual(got, row.bytes) {
			t.Errorf("test helper vlq(%#x) = % X, want % X", row.value, got, row.bytes)
		}
		trk := cat(row.bytes, []byte{0x90, 60, 100}, []byte{0x00, 0x80, 60, 0}, eot)
		ps, err := Parse("vlq.mid", smf(0, 96, trk), ParseOptions{})
		if err != nil {
			t.Fatalf("%#x: %v", row.value, err)
		}
		if n := ps[0].Notes; len(n) != 1 || n[0].StartTick != int64(row.value) || n[0].EndTick != int64(row.value) {
			t.Errorf("delta % X: notes %+v, want one note at tick %d", row.bytes, n, row.value)
		}
		if ps[0].EndTick != int64(row.value) {
			t.Errorf("delta % X: EndTick %d, want %d", row.bytes, ps[0].EndTick, row.value)
		}
	}
}

// specFormat0 is the example file of SMF 1.0 ("Appendix 1.1 - Example MIDI File,
// format 0"): 96 ticks per quarter, 4/4, 120 BPM, three channels, running status.
func specFormat0() []byte {
	trk := []byte{
		0x00, 0xFF, 0x58, 0x04, 0x04, 0x02, 0x18, 0x08, // time signature 4/4, 24 clocks, 8 32nds
		0x00, 0xFF, 0x51, 0x03, 0x07, 0xA1, 0x20, // tempo 500,000 µs per quarter
		0x00, 0xC0, 0x05, // channel 1 program 5
		0x00, 0xC1, 0x2E, // channel 2 program 46
		0x00, 0xC2, 0x46, // channel 3 program 70
		0x00, 0x92, 0x30, 0x60, // channel 3 note on C2 (48), velocity 96
		0x00, 0x3C, 0x60, // running status: note on C3 (60), velocity 96
		0x60, 0x91, 0x43, 0x40, // channel 2 note on G3 (67), velocity 64
		0x60, 0x90, 0x4C, 0x20, // channel 1 note on E4 (76), velocity 32
		0x81, 0x40, 0x82, 0x30, 0x40, // two-byte delta (192): channel 3 note off C2, release velocity 64
		0x00, 0x3C, 0x40, // running status: note off C3
		0x00, 0x81, 0x43, 0x40, // channel 2 note off G3
		0x00, 0x80, 0x4C, 0x40, // channel 1 note off E4
		0x00, 0xFF, 0x2F, 0x00, // end of track
	}
	if len(trk) != 0x3B { // SMF 1.0 gives the track length as 00 00 00 3B
		panic("spec example track has the wrong length")
	}
	return smf(0, 0x60, trk)
}

// specFormat1 is the same example in the format-1 rendition of SMF 1.0 (Appendix 1.1):
// a tempo track and one track per channel, notes ended by note-on with velocity 0.
func specFormat1() []byte {
	b := smf(1, 0x60,
		[]byte{ // 00 00 00 14
			0x00, 0xFF, 0x58, 0x04, 0x04, 0x02, 0x18, 0x08,
			0x00, 0xFF, 0x51, 0x03, 0x07, 0xA1, 0x20,
			0x83, 0x00, 0xFF, 0x2F, 0x00,
		},
		[]byte{ // 00 00 00 10
			0x00, 0xC0, 0x05,
			0x81, 0x40, 0x90, 0x4C, 0x20,
			0x81, 0x40, 0x4C, 0x00,
			0x00, 0xFF, 0x2F, 0x00,
		},
		[]byte{ // 00 00 00 0F
			0x00, 0xC1, 0x2E,
			0x60, 0x91, 0x43, 0x40,
			0x82, 0x20, 0x43, 0x00,
			0x00, 0xFF, 0x2F, 0x00,
		},
		[]byte{ // 00 00 00 15
			0x00, 0xC2, 0x46,
			0x00, 0x92, 0x30, 0x60,
			0x00, 0x3C, 0x60,
			0x83, 0x00, 0x30, 0x00,
			0x00, 0x3C, 0x00,
			0x00, 0xFF, 0x2F, 0x00,
		},
	)
	// the track lengths SMF 1.0 gives for this rendition
	off := 14
	for _, n := range []int{0x14, 0x10, 0x0F, 0x15} {
		if got := int(b[off+4])<<24 | int(b[off+5])<<16 | int(b[off+6])<<8 | int(b[off+7]); got != n {
			panic("spec format-1 example has a track of the wrong length")
		}
		off += 8 + n
	}
	return b
}

func TestSpecExample(t *testing.T) {
	// SMF 1.0 Appendix 1.1: keys 48 and 60 at velocity 96 from tick 0 to 384, key 67
	// at velocity 64 from 96 to 384, key 76 at velocity 32 from 192 to 384; at 96 PPQ
	// and 120 BPM they last 2.0, 2.0, 1.5 and 1.0 s. Programs 5, 46 and 70 on channels
	// 1-3 (indexes 0-2).
	cases := []struct {
		name   string
		data   []byte
		tracks [3]int // track of the channel 3, 2 and 1 notes
		ntrk   int
	}{
		{"format 0, running status", specFormat0(), [3]int{0, 0, 0}, 1},
		{"format 1, note-on velocity 0 as off", specFormat1(), [3]int{3, 2, 1}, 4},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			ps, err := Parse("spec.mid", c.data, DefaultParseOptions())
			if err != nil {
				t.Fatal(err)
			}
			if len(ps) != 1 {
				t.Fatalf("%d pieces, want 1", len(ps))
			}
			got := ps[0]
			want := []Note{
				{StartTick: 0, EndTick: 384, Start: 0, End: 2, Pitch: 48, Velocity: 96, Channel: 2, Program: 70, Track: c.tracks[0]},
				{StartTick: 0, EndTick: 384, Start: 0, End: 2, Pitch: 60, Velocity: 96, Channel: 2, Program: 70, Track: c.tracks[0]},
				{StartTick: 96, EndTick: 384, Start: 0.5, End: 2, Pitch: 67, Velocity: 64, Channel: 1, Program: 46, Track: c.tracks[1]},
				{StartTick: 192, EndTick: 384, Start: 1, End: 2, Pitch: 76, Velocity: 32, Channel: 0, Program: 5, Track: c.tracks[2]},
			}
			if !reflect.DeepEqual(got.Notes, want) {
				t.Errorf("notes\n got %+v\nwant %+v", got.Notes, want)
			}
			for i, d := range []float64{2.0, 2.0, 1.5, 1.0} {
				if n := got.Notes[i]; n.End-n.Start != d {
					t.Errorf("note %d lasts %v s, want %v", i, n.End-n.Start, d)
				}
			}
			if want := []Tempo{{0, 500000}}; !reflect.DeepEqual(got.Tempos, want) {
				t.Errorf("tempos %+v, want %+v", got.Tempos, want)
			}
			if want := []Meter{{0, 4, 4}}; !reflect.DeepEqual(got.Meters, want) {
				t.Errorf("meters %+v, want %+v", got.Meters, want)
			}
			if got.TicksPerQuarter != 96 || got.EndTick != 384 || len(got.TrackNames) != c.ntrk || len(got.Warnings) != 0 {
				t.Errorf("TicksPerQuarter %d EndTick %d TrackNames %q Warnings %v", got.TicksPerQuarter, got.EndTick, got.TrackNames, got.Warnings)
			}
		})
	}
}

func TestDefaultTempo(t *testing.T) {
	note := func(delta byte, key byte) []byte { return []byte{delta, 0x90, key, 100, 0x00, 0x80, key, 0} }
	// SMF 1.0: with no Set Tempo event the tempo is 120 BPM (500,000 µs per quarter):
	// at 96 PPQ a note at tick 96 starts at 0.500 s.
	ps, err := Parse("t.mid", smf(0, 96, cat(note(96, 60), eot)), ParseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if got := ps[0].Notes[0].Start; got != 0.5 {
		t.Errorf("tick 96 at %v s, want 0.5", got)
	}
	// SMF 1.0 "Set Tempo": 1,000,000 µs per quarter from tick 96 on; tick 192 is
	// 0.5 s + 96 ticks at 1 s per quarter = 1.500 s.
	trk := cat(
		[]byte{96, 0xFF, 0x51, 0x03, 0x0F, 0x42, 0x40}, // 1,000,000 = 0x0F4240
		note(96, 62),
		eot,
	)
	ps, err = Parse("t.mid", smf(0, 96, trk), ParseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if got := ps[0].Notes[0].Start; got != 1.5 {
		t.Errorf("tick 192 at %v s, want 1.5", got)
	}
	p := &ps[0]
	for _, c := range []struct {
		tick int64
		sec  float64
	}{{0, 0}, {96, 0.5}, {144, 1.0}, {192, 1.5}, {288, 2.5}} {
		if got := p.Seconds(c.tick); got != c.sec {
			t.Errorf("Seconds(%d) = %v, want %v", c.tick, got, c.sec)
		}
		if got := p.TickOf(c.sec); got != c.tick {
			t.Errorf("TickOf(%v) = %d, want %d", c.sec, got, c.tick)
		}
	}
}

// TestSMPTE checks SMPTE division (SMF 1.0, "Header Chunks": the high byte of the
// division is the negative frame rate, -24, -25, -29 or -30, the low byte the ticks
// per frame; -29 is 30 drop-frame, 29.97 fps) and that Set Tempo does not change it.
func TestSMPTE(t *testing.T) {
	cases := []struct {
		name string
		div  uint16
		tick int64
		want float64
		fps  float64
	}{
		// SMF 1.0: "-25 and 40" gives millisecond resolution.
		{"25 fps x 40", 0xE728, 1000, 1.0, 25},
		{"24 fps x 4", 0xE804, 96, 1.0, 24},
		{"30 fps x 80", 0xE250, 2400, 1.0, 30},
		// 29.97 fps (30000/1001 per SMPTE 12M, from memory): 30 frames of 10 ticks last 1.001 s.
		{"29.97 fps x 10", 0xE30A, 300, 1.001, 30000.0 / 1001},
	}
	for _, c := range cases {
		trk := cat(
			[]byte{0x00, 0xFF, 0x51, 0x03, 0x0F, 0x42, 0x40}, // ignored under SMPTE
			vlq(uint32(c.tick)), []byte{0x90, 60, 100, 0x00, 0x80, 60, 0},
			eot,
		)
		ps, err := Parse("smpte.mid", smf(0, c.div, trk), ParseOptions{})
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		p := ps[0]
		if got := p.Notes[0].Start; math.Abs(got-c.want) > 1e-12 {
			t.Errorf("%s: tick %d at %v s, want %v", c.name, c.tick, got, c.want)
		}
		if p.SMPTEFPS != c.fps || p.TicksPerFrame != int(c.div&0xFF) {
			t.Errorf("%s: fps %v ticks/frame %d", c.name, p.SMPTEFPS, p.TicksPerFrame)
		}
		if got := p.TickOf(c.want); got != c.tick {
			t.Errorf("%s: TickOf(%v) = %d, want %d", c.name, c.want, got, c.tick)
		}
	}
}

// TestBrokenFiles checks the error, track and byte offset for each kind of damage.
// Offsets: the MThd chunk takes bytes 0-13, the first MTrk header 14-21, its body
// starts at 22.
func TestBrokenFiles(t *testing.T) {
	good := smf(1, 96, cat([]byte{0x00, 0x90, 60, 100, 0x60, 0x80, 60, 0}, eot))
	hugeSysEx := smf(0, 96, []byte{0x00, 0xF0, 0xFF, 0xFF, 0xFF, 0xFF, 0x0F, 0x00, 0x00, 0x00, 0xFF, 0x2F, 0x00})
	if len(hugeSysEx) != 35 {
		t.Fatalf("huge SysEx file is %d bytes, want 35", len(hugeSysEx))
	}
	cases := []struct {
		name   string
		data   []byte
		opts   ParseOptions
		err    error
		track  int
		offset int64
	}{
		{"empty", nil, ParseOptions{}, ErrEmpty, -1, 0},
		{"wrong magic", cat([]byte("MThx"), good[4:]), ParseOptions{}, ErrBadMagic, -1, 0},
		{"not MIDI at all", []byte("<html><body>hello</body></html>"), ParseOptions{}, ErrBadMagic, -1, 0},
		{"truncated magic", []byte("MTh"), ParseOptions{}, ErrTruncated, -1, 3},
		{"truncated header", good[:10], ParseOptions{}, ErrTruncated, -1, 10},
		{"header length 5", cat([]byte("MThd\x00\x00\x00\x05"), good[8:]), ParseOptions{}, ErrBadHeader, -1, 4},
		{"header length past end", cat([]byte("MThd\x00\x00\x10\x00"), good[8:]), ParseOptions{}, ErrChunkLength, -1, 4},
		{"format 3", cat(header(3, 1, 96), good[14:]), ParseOptions{}, ErrBadHeader, -1, 8},
		{"zero tracks", header(1, 0, 96), ParseOptions{}, ErrNoTracks, -1, 10},
		{"zero division", cat(header(0, 1, 0), good[14:]), ParseOptions{}, ErrZeroDivision, -1, 12},
		{"SMPTE frame code 32", cat(header(0, 1, 0xE028), good[14:]), ParseOptions{}, ErrBadHeader, -1, 12},
		{"SMPTE zero ticks per frame", cat(header(0, 1, 0xE700), good[14:]), ParseOptions{}, ErrZeroDivision, -1, 13},
		{"truncated track chunk header", good[:17], ParseOptions{}, ErrTruncated, 0, 17},
		{"truncated track chunk", good[:len(good)-2], ParseOptions{}, ErrChunkLength, 0, 18},
		{"chunk length past end", cat(good[:14], []byte("MTrk\x00\x00\x00\x64"), good[22:]), ParseOptions{}, ErrChunkLength, 0, 18},
		{"more tracks claimed than exist", cat(header(1, 3, 96), good[14:]), ParseOptions{}, ErrTruncated, 1, int64(len(good))},
		{"invalid VLQ (5 bytes)", smf(0, 96, cat([]byte{0x81, 0x81, 0x81, 0x81, 0x00, 0x90, 60, 100}, eot)), ParseOptions{}, ErrBadVLQ, 0, 22},
		{"delta cut by chunk end", smf(0, 96, []byte{0x00, 0x90, 60, 100, 0x81}), ParseOptions{}, ErrTruncated, 0, 26},
		{"running status with no status byte", smf(0, 96, cat([]byte{0x00, 0x3C, 0x40}, eot)), ParseOptions{}, ErrRunningStatus, 0, 23},
		{"unterminated SysEx", smf(0, 96, cat([]byte{0x00, 0xF0, 0x03, 0x43, 0x12, 0x00}, eot)), ParseOptions{}, ErrUnterminatedSysEx, 0, 23},
		{"SysEx left open by a second SysEx", smf(0, 96, cat([]byte{0x00, 0xF0, 0x01, 0x43, 0x00, 0xF0, 0x01, 0xF7}, eot)), ParseOptions{}, ErrUnterminatedSysEx, 0, 23},
		{"SysEx length past chunk end", smf(0, 96, []byte{0x00, 0xF0, 0x05, 0x43, 0xF7}), ParseOptions{}, ErrTruncated, 0, 24},
		{"35-byte file with a 5-byte VLQ SysEx length", hugeSysEx, ParseOptions{}, ErrBadVLQ, 0, 24},
		{"meta length FF FF FF 7F", smf(0, 96, cat([]byte{0x00, 0xFF, 0x01, 0xFF, 0xFF, 0xFF, 0x7F, 0x00}, eot)), ParseOptions{}, ErrTruncated, 0, 25},
		{"meta cut after its type", smf(0, 96, []byte{0x00, 0xFF, 0x01}), ParseOptions{}, ErrTruncated, 0, 25},
		{"track length shorter than its events", smf(0, 96, []byte{0x00, 0x90, 60}), ParseOptions{}, ErrTruncated, 0, 23},
		{"status byte as data byte", smf(0, 96, cat([]byte{0x00, 0x90, 60, 0x90}, eot)), ParseOptions{}, ErrBadData, 0, 25},
		{"system common status in a track", smf(0, 96, cat([]byte{0x00, 0xF1, 0x00}, eot)), ParseOptions{}, ErrBadStatus, 0, 23},
		{"too many events", smf(0, 96, cat([]byte{0x00, 0x90, 60, 100, 0x00, 0x80, 60, 0}, eot)), ParseOptions{MaxEventsPerTrack: 2}, ErrTooManyEvents, 0, 30},
		{"damage in the second track", smf(1, 96, eot, cat([]byte{0x00, 0x3C, 0x40}, eot)), ParseOptions{}, ErrRunningStatus, 1, 35},
		{"RIFF without data chunk", cat([]byte("RIFF\x04\x00\x00\x00RMID")), ParseOptions{}, ErrTruncated, -1, 12},
		{"RIFF of another form", cat([]byte("RIFF\x04\x00\x00\x00WAVE")), ParseOptions{}, ErrBadMagic, -1, 8},
		{"RIFF data chunk past end", cat([]byte("RIFF\x20\x00\x00\x00RMIDdata\xff\x00\x00\x00"), good), ParseOptions{}, ErrChunkLength, -1, 16},
		{"damage inside RIFF counts file offsets", riff(smf(0, 96, cat([]byte{0x00, 0x3C, 0x40}, eot))), ParseOptions{}, ErrRunningStatus, 0, 20 + 23},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var before, after runtime.MemStats
			runtime.ReadMemStats(&before)
			ps, err := Parse("bad.mid", c.data, c.opts)
			runtime.ReadMemStats(&after)
			if err == nil {
				t.Fatalf("no error; pieces %+v", ps)
			}
			if !errors.Is(err, c.err) {
				t.Errorf("error %v, want %v", err, c.err)
			}
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %T, want *ParseError", err)
			}
			got := [3]any{pe.File, pe.Track, pe.Offset}
			want := [3]any{"bad.mid", c.track, c.offset}
			if got != want {
				t.Errorf("(file, track, offset) = %v, want %v (%v)", got, want, err)
			}
			// never allocate from an untrusted length: a few KiB, whatever the claim
			if a := after.TotalAlloc - before.TotalAlloc; a > 1<<20 {
				t.Errorf("allocated %d bytes for a %d-byte file", a, len(c.data))
			}
		})
	}
}

func TestParseErrorMessage(t *testing.T) {
	_, err := Parse("songs/a.mid", smf(0, 96, cat([]byte{0x00, 0x3C, 0x40}, eot)), ParseOptions{})
	want := "songs/a.mid: track 0: byte 23: data byte with no running status"
	if err == nil || err.Error() != want {
		t.Errorf("error %q, want %q", err, want)
	}
	_, err = Parse("b.mid", header(1, 0, 96), ParseOptions{})
	want = "b.mid: byte 10: zero tracks"
	if err == nil || err.Error() != want {
		t.Errorf("error %q, want %q", err, want)
	}
}

// riff wraps an SMF in a RIFF RMID container (Microsoft Multimedia Programming
// Interface and Data Specifications 1.0, from memory): "RIFF" size "RMID" "data"
// size SMF, sizes little-endian, chunks padded to even length.
func riff(s []byte) []byte {
	le := func(n int) []byte { return []byte{byte(n), byte(n >> 8), byte(n >> 16), byte(n >> 24)} }
	pad := []byte{}
	if len(s)%2 == 1 {
		pad = []byte{0}
	}
	body := cat([]byte("RMID"), []byte("data"), le(len(s)), s, pad)
	return cat([]byte("RIFF"), le(len(body)), body)
}

func TestLenientInputs(t *testing.T) {
	notes := cat([]byte{0x00, 0x90, 60, 100, 0x60, 0x80, 60, 0}, eot)
	base, err := Parse("a.mid", smf(0, 96, notes), ParseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	long := cat([]byte("MThd\x00\x00\x00\x08\x00\x00\x00\x01\x00\x60\xAA\xBB"), chunk("MTrk", notes))
	cases := []struct {
		name string
		data []byte
		warn Warnings
	}{
		// SMF 1.0, "Header Chunks": "more parameters may be added to the MThd chunk in
		// the future: it is important to read and honor the length".
		{"header length 8", long, Warnings{}},
		// SMF 1.0, "Chunks": unknown chunk types must be ignored.
		{"unknown chunk", cat(header(0, 1, 96), chunk("XFIH", []byte{1, 2, 3}), chunk("MTrk", notes)), Warnings{WarnUnknownChunk: 1}},
		{"RIFF RMID", riff(smf(0, 96, notes)), Warnings{}},
		{"RIFF RMID with a LIST chunk first", cat([]byte("RIFF\x00\x00\x00\x00RMIDLIST\x03\x00\x00\x00abc\x00data"), []byte{byte(len(smf(0, 96, notes))), 0, 0, 0}, smf(0, 96, notes)), Warnings{}},
		{"trailing bytes", cat(smf(0, 96, notes), []byte{0, 0, 0}), Warnings{WarnTrailing: 1}},
		{"bytes after end of track", smf(0, 96, cat(notes, []byte{0x12, 0x34})), Warnings{WarnAfterEOT: 1}},
		{"missing end of track", smf(0, 96, notes[:len(notes)-4]), Warnings{WarnMissingEOT: 1}},
		{"running status after a meta event", smf(0, 96, cat([]byte{0x00, 0x90, 60, 100, 0x00, 0xFF, 0x01, 0x01, 'x', 0x60, 60, 0}, eot)), Warnings{WarnRunningAfterMeta: 1}},
		{"SysEx in packets", smf(0, 96, cat([]byte{0x00, 0xF0, 0x02, 0x43, 0x12, 0x00, 0xF7, 0x02, 0x00, 0xF7}, notes)), Warnings{}},
		{"escaped bytes", smf(0, 96, cat([]byte{0x00, 0xF7, 0x01, 0xF8}, notes)), Warnings{}},
		{"bad tempo length", smf(0, 96, cat([]byte{0x00, 0xFF, 0x51, 0x02, 0x07, 0xA1}, notes)), Warnings{WarnBadMeta: 1}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			ps, err := Parse("a.mid", c.data, ParseOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(ps[0].Notes, base[0].Notes) {
				t.Errorf("notes %+v, want %+v", ps[0].Notes, base[0].Notes)
			}
			if !reflect.DeepEqual(ps[0].Warnings, c.warn) {
				t.Errorf("warnings %v, want %v", ps[0].Warnings, c.warn)
			}
		})
	}
}

// TestPairing checks the pairing policies of notes.go on one track at 96 PPQ and
// the default tempo (a tick is 1/192 s).
func TestPairing(t *testing.T) {
	on := func(d byte, ch, key, vel byte) []byte { return []byte{d, 0x90 | ch, key, vel} }
	off := func(d byte, ch, key byte) []byte { return []byte{d, 0x80 | ch, key, 0x40} }
	cc := func(d byte, ch, num, val byte) []byte { return []byte{d, 0xB0 | ch, num, val} }
	prog := func(d byte, ch, p byte) []byte { return []byte{d, 0xC0 | ch, p} }
	n := func(start, end int64, key, vel, ch, program byte) Note {
		return Note{StartTick: start, EndTick: end, Start: float64(start) / 192, End: float64(end) / 192,
			Pitch: key, Velocity: vel, Channel: ch, Program: program, Drum: ch == 9}
	}
	cases := []struct {
		name  string
		track []byte
		pedal bool
		want  []Note
		warn  Warnings
	}{
		{"note-on velocity 0 ends a note", cat(on(0, 0, 60, 90), on(48, 0, 60, 0)), false,
			[]Note{n(0, 48, 60, 90, 0, 0)}, Warnings{}},
		{"retrigger ends the earlier note", cat(on(0, 0, 60, 90), on(10, 0, 60, 80), off(10, 0, 60)), false,
			[]Note{n(0, 10, 60, 90, 0, 0), n(10, 20, 60, 80, 0, 0)}, Warnings{WarnRetrigger: 1}},
		{"open at end of track", cat(on(0, 0, 60, 90), []byte{50, 0xFF, 0x2F, 0x00}), false,
			[]Note{n(0, 50, 60, 90, 0, 0)}, Warnings{WarnOpenAtEnd: 1}},
		{"zero-length note kept", cat(on(5, 0, 60, 90), off(0, 0, 60)), false,
			[]Note{n(5, 5, 60, 90, 0, 0)}, Warnings{WarnZeroLength: 1}},
		{"orphan note-off ignored", cat(off(5, 0, 61), on(0, 0, 60, 90), off(1, 0, 60)), false,
			[]Note{n(5, 6, 60, 90, 0, 0)}, Warnings{WarnOrphanOff: 1}},
		{"pairing is per channel", cat(on(0, 0, 60, 90), on(0, 1, 60, 91), off(4, 1, 60), off(4, 0, 60)), false,
			[]Note{n(0, 8, 60, 90, 0, 0), n(0, 4, 60, 91, 1, 0)}, Warnings{}},
		{"chord sorted by pitch", cat(on(0, 0, 67, 1), on(0, 0, 60, 2), on(0, 0, 64, 3), off(9, 0, 60), off(0, 0, 64), off(0, 0, 67)), false,
			[]Note{n(0, 9, 60, 2, 0, 0), n(0, 9, 64, 3, 0, 0), n(0, 9, 67, 1, 0, 0)}, Warnings{}},
		{"pedal extends to release", cat(cc(0, 0, 64, 127), on(0, 0, 60, 90), off(10, 0, 60), cc(20, 0, 64, 0)), true,
			[]Note{n(0, 30, 60, 90, 0, 0)}, Warnings{}},
		{"pedal off: no extension", cat(cc(0, 0, 64, 127), on(0, 0, 60, 90), off(10, 0, 60), cc(20, 0, 64, 0)), false,
			[]Note{n(0, 10, 60, 90, 0, 0)}, Warnings{}},
		// MIDI 1.0 controller 64 (damper pedal): 0-63 off, 64-127 on (from memory)
		{"pedal value 63 is up", cat(cc(0, 0, 64, 63), on(0, 0, 60, 90), off(10, 0, 60), cc(20, 0, 64, 0)), true,
			[]Note{n(0, 10, 60, 90, 0, 0)}, Warnings{}},
		{"re-striking a held key ends it", cat(cc(0, 0, 64, 100), on(0, 0, 60, 90), off(10, 0, 60), on(5, 0, 60, 70), off(5, 0, 60), cc(5, 0, 64, 0)), true,
			[]Note{n(0, 15, 60, 90, 0, 0), n(15, 25, 60, 70, 0, 0)}, Warnings{}},
		{"pedal is per channel", cat(cc(0, 1, 64, 127), on(0, 0, 60, 90), off(10, 0, 60), cc(20, 1, 64, 0)), true,
			[]Note{n(0, 10, 60, 90, 0, 0)}, Warnings{}},
		{"pedal held to end of track", cat(cc(0, 0, 64, 127), on(0, 0, 60, 90), off(10, 0, 60), []byte{30, 0xFF, 0x2F, 0x00}), true,
			[]Note{n(0, 40, 60, 90, 0, 0)}, Warnings{}},
		// General MIDI 1: channel 10 (index 9) is percussion.
		{"programs per channel and drums", cat(prog(0, 0, 40), on(0, 0, 60, 90), prog(0, 9, 3), on(0, 9, 36, 100), off(5, 9, 36), prog(0, 0, 41), on(0, 0, 62, 1), off(5, 0, 60), off(0, 0, 62)), false,
			[]Note{n(0, 10, 60, 90, 0, 40), n(0, 5, 36, 100, 9, 3), n(5, 10, 62, 1, 0, 41)}, Warnings{}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			trk := c.track
			if len(trk) < 4 || trk[len(trk)-2] != 0x2F {
				trk = cat(trk, eot)
			}
			ps, err := Parse("p.mid", smf(0, 96, trk), ParseOptions{Pedal: c.pedal})
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(ps[0].Notes, c.want) {
				t.Errorf("notes\n got %+v\nwant %+v", ps[0].Notes, c.want)
			}
			if !reflect.DeepEqual(ps[0].Warnings, c.warn) {
				t.Errorf("warnings %v, want %v", ps[0].Warnings, c.warn)
			}
		})
	}
}

func TestFormat1SortAndPrograms(t *testing.T) {
	// Program changes act on a channel across tracks (MIDI 1.0 channel state); notes
	// merge by (StartTick, Track, Channel, Pitch).
	t0 := cat([]byte{0x00, 0xFF, 0x03, 0x04, 'l', 'e', 'a', 'd'}, []byte{0x00, 0xC3, 0x18}, eot)
	t1 := cat([]byte{0x0A, 0x93, 64, 50, 0x0A, 0x83, 64, 0}, eot)
	t2 := cat([]byte{0x00, 0x92, 50, 60, 0x0A, 0x93, 40, 70, 0x14, 0x82, 50, 0, 0x00, 0x83, 40, 0}, eot)
	ps, err := Parse("f1.mid", smf(1, 96, t0, t1, t2), ParseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	got := ps[0]
	ticks := func(tk int64) float64 { return float64(tk) / 192 }
	want := []Note{
		{StartTick: 0, EndTick: 30, Start: 0, End: ticks(30), Pitch: 50, Velocity: 60, Channel: 2, Track: 2},
		{StartTick: 10, EndTick: 20, Start: ticks(10), End: ticks(20), Pitch: 64, Velocity: 50, Channel: 3, Program: 0x18, Track: 1},
		{StartTick: 10, EndTick: 30, Start: ticks(10), End: ticks(30), Pitch: 40, Velocity: 70, Channel: 3, Program: 0x18, Track: 2},
	}
	if !reflect.DeepEqual(got.Notes, want) {
		t.Errorf("notes\n got %+v\nwant %+v", got.Notes, want)
	}
	if want := []string{"lead", "", ""}; !reflect.DeepEqual(got.TrackNames, want) {
		t.Errorf("track names %q, want %q", got.TrackNames, want)
	}
}

func TestFormat2(t *testing.T) {
	// SMF 1.0: format 2 tracks are independent patterns, so each is its own piece with
	// its own tempo map.
	a := cat([]byte{0x00, 0xFF, 0x03, 0x01, 'A', 0x00, 0xFF, 0x51, 0x03, 0x0F, 0x42, 0x40, 0x00, 0x90, 60, 100, 0x60, 0x80, 60, 0}, eot)
	b := cat([]byte{0x00, 0xFF, 0x58, 0x04, 0x03, 0x02, 0x18, 0x08, 0x60, 0x91, 62, 100, 0x60, 0x81, 62, 0}, eot)
	ps, err := Parse("f2.mid", smf(2, 96, a, b), ParseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(ps) != 2 {
		t.Fatalf("%d pieces, want 2", len(ps))
	}
	want := []Piece{
		{Index: 0, Format: 2, TicksPerQuarter: 96, Tempos: []Tempo{{0, 1000000}}, TrackNames: []string{"A"}, EndTick: 96, Warnings: Warnings{},
			Notes: []Note{{StartTick: 0, EndTick: 96, Start: 0, End: 1, Pitch: 60, Velocity: 100, Track: 0}}},
		{Index: 1, Format: 2, TicksPerQuarter: 96, Meters: []Meter{{0, 3, 4}}, TrackNames: []string{""}, EndTick: 192, Warnings: Warnings{},
			Notes: []Note{{StartTick: 96, EndTick: 192, Start: 0.5, End: 1, Pitch: 62, Velocity: 100, Channel: 1, Track: 1}}},
	}
	if !reflect.DeepEqual(ps, want) {
		t.Errorf("pieces\n got %+v\nwant %+v", ps, want)
	}
	if m := ps[1].MeterAt(500); m != (Meter{0, 3, 4}) {
		t.Errorf("MeterAt = %+v", m)
	}
	if m := ps[0].MeterAt(0); m != (Meter{0, 4, 4}) {
		t.Errorf("default MeterAt = %+v, want 4/4 (SMF 1.0)", m)
	}
}

func TestMeterAndKeyMaps(t *testing.T) {
	trk := cat(
		[]byte{0x00, 0xFF, 0x58, 0x04, 0x03, 0x02, 0x18, 0x08},       // 3/4 at 0
		[]byte{0x00, 0xFF, 0x59, 0x02, 0xFD, 0x01},                   // 3 flats, minor at 0
		[]byte{0x81, 0x40, 0xFF, 0x58, 0x04, 0x06, 0x03, 0x18, 0x08}, // 6/8 at 192
		[]byte{0x00, 0xFF, 0x59, 0x02, 0x02, 0x00},                   // 2 sharps, major at 192
		eot,
	)
	ps, err := Parse("m.mid", smf(0, 96, trk), ParseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	p := &ps[0]
	if want := []Meter{{0, 3, 4}, {192, 6, 8}}; !reflect.DeepEqual(p.Meters, want) {
		t.Errorf("meters %+v, want %+v", p.Meters, want)
	}
	if want := []Key{{0, -3, true}, {192, 2, false}}; !reflect.DeepEqual(p.Keys, want) {
		t.Errorf("keys %+v, want %+v", p.Keys, want)
	}
	for _, c := range []struct {
		tick int64
		want Meter
	}{{0, Meter{0, 3, 4}}, {191, Meter{0, 3, 4}}, {192, Meter{192, 6, 8}}, {10000, Meter{192, 6, 8}}} {
		if got := p.MeterAt(c.tick); got != c.want {
			t.Errorf("MeterAt(%d) = %+v, want %+v", c.tick, got, c.want)
		}
	}
	if k, ok := p.KeyAt(200); !ok || k != (Key{192, 2, false}) {
		t.Errorf("KeyAt(200) = %+v %v", k, ok)
	}
}

func TestTimeMapManyTempos(t *testing.T) {
	// 20 tempo changes, one every quarter, alternating 120 and 60 BPM (500,000 and
	// 1,000,000 µs per quarter): quarter i lasts 0.5 s when i is even, 1 s when odd,
	// and 1 s from quarter 19 on (SMF 1.0: a tempo holds until the next).
	var trk []byte
	for i := 0; i < 20; i++ {
		us := []byte{0x07, 0xA1, 0x20}
		if i%2 == 1 {
			us = []byte{0x0F, 0x42, 0x40}
		}
		d := byte(96)
		if i == 0 {
			d = 0
		}
		trk = cat(trk, vlq(uint32(d)), []byte{0xFF, 0x51, 0x03}, us)
	}
	trk = cat(trk, eot)
	ps, err := Parse("tm.mid", smf(0, 96, trk), ParseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	p := &ps[0]
	tm := p.TimeMap()
	want := 0.0
	for q := int64(0); q < 25; q++ {
		tick := q * 96
		if got := tm.Seconds(tick); got != want {
			t.Errorf("Seconds(%d) = %v, want %v", tick, got, want)
		}
		if got := p.Seconds(tick); got != want {
			t.Errorf("Piece.Seconds(%d) = %v, want %v", tick, got, want)
		}
		if got := tm.Tick(want); got != tick {
			t.Errorf("Tick(%v) = %d, want %d", want, got, tick)
		}
		if q%2 == 1 || q >= 19 { // the last tempo (1,000,000) holds on
			want += 1
		} else {
			want += 0.5
		}
	}
}

// TestParseConcurrent checks that Parse, which reuses pooled state, gives the same
// pieces from several goroutines as from one (run it with -race).
func TestParseConcurrent(t *testing.T) {
	inputs := [][]byte{specFormat0(), specFormat1(), riff(specFormat0())}
	for _, p := range openttdPaths() {
		if d, err := os.ReadFile(p); err == nil {
			inputs = append(inputs, d)
		}
	}
	want := make([][]Piece, len(inputs))
	for i, d := range inputs {
		ps, err := Parse("c.mid", d, DefaultParseOptions())
		if err != nil {
			t.Fatal(err)
		}
		want[i] = ps
	}
	var wg sync.WaitGroup
	errs := make(chan string, 4*len(inputs))
	for w := range 4 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := range inputs {
				i := (k + w*7) % len(inputs)
				ps, err := Parse("c.mid", inputs[i], DefaultParseOptions())
				if err != nil || !reflect.DeepEqual(ps, want[i]) {
					errs <- fmt.Sprintf("input %d differs from the sequential parse (err %v)", i, err)
				}
			}
		}()
	}
	wg.Wait()
	close(errs)
	for e := range errs {
		t.Error(e)
	}
}

func TestSMPTEDropsTempos(t *testing.T) {
	// SMF 1.0: under SMPTE division, time is absolute; Set Tempo does not change it,
	// so Tempos stays empty and TicksPerQuarter is the 120 BPM equivalent.
	trk := cat([]byte{0x00, 0xFF, 0x51, 0x03, 0x0F, 0x42, 0x40}, eot)
	ps, err := Parse("s.mid", smf(0, 0xE728, trk), ParseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if p := ps[0]; len(p.Tempos) != 0 || p.TicksPerQuarter != 500 {
		t.Errorf("tempos %v, ticks per quarter %d; want none and 500 (25 fps x 40 / 2)", p.Tempos, p.TicksPerQuarter)
	}
}

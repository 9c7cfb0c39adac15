package ingest

import (
	"bytes"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	gsmf "gitlab.com/gomidi/midi/v2/smf"
)

// Differential tests against gomidi's SMF reader (gitlab.com/gomidi/midi/v2/smf,
// ReadFrom), an independent implementation. Where both accept a file they must read
// the same events, track by track (absolute tick and message bytes). Where only one
// accepts, the input must fall under one of these documented differences:
//
//	diffHeaderLength  a header length over 6: we skip the extra bytes as SMF 1.0 asks
//	                  ("Header Chunks": honor the length); gomidi rejects the file.
//	diffRIFF          a RIFF RMID wrapper: we unwrap it; gomidi rejects the file.
//	diffStricter      damage: we reject, with the error naming track and offset, what
//	                  gomidi accepts or reads on from: a VLQ over 4 bytes, a length past
//	                  the end of its chunk, an event crossing its chunk's end, a data
//	                  byte with no running status (also at the start of a track, where
//	                  gomidi carries status over from the previous track), a status
//	                  byte where a data byte belongs, system common or real-time status
//	                  bytes in a track, a SysEx never ended by F7, more tracks declared
//	                  than present, zero division, an unknown SMPTE frame code.
//	diffRunningMeta   running status right after a meta or SysEx event: SMF 1.0 says
//	                  those cancel it, gomidi resets it and misreads the rest of the
//	                  track; we keep it (real files do this) and count a warning.
//	diffSlack         bytes after End of Track inside a chunk, or after the last
//	                  declared track: we skip them with a warning; gomidi reads them
//	                  as more events and chunks.
//	diffSMPTE         SMPTE division: we convert ticks to seconds (SMF 1.0); gomidi
//	                  v2.3.23 panics in ReadFrom (interface conversion from TimeCode
//	                  to MetricTicks while computing tempo changes).
//
// One difference is compared after normalising rather than classified: End of Track
// data. An End of Track declaring a non-zero length (SMF 1.0 defines FF 2F 00): we skip
// the declared bytes and end the track; gomidi reports the event as FF 2F 00. Both end
// the track there, so our End of Track is compared as FF 2F 00. (Found by
// FuzzDiffGomidi; the input is kept in testdata/fuzz.)
//
// gomidi is only run where that is safe: it allocates whatever a length field says
// before checking it (the issue that asked for this reader measured 8 GiB for a
// 35-byte file), so on inputs we reject for a bad length or VLQ it is not run, and
// those cases are diffStricter by construction.

type gomidiDiff int

const (
	diffNone gomidiDiff = iota
	diffHeaderLength
	diffRIFF
	diffStricter
	diffRunningMeta
	diffSlack
	diffSMPTE
)

func (d gomidiDiff) String() string {
	return [...]string{"none", "header length", "RIFF", "stricter on damage", "running status after meta", "slack bytes", "SMPTE division"}[d]
}

type diffEvent struct {
	Tick int64
	Msg  string // message bytes as gomidi stores them
}

// ourEvents reads data with Reader into gomidi's message layout, and classifies it.
func ourEvents(data []byte) ([][]diffEvent, gomidiDiff, error) {
	r, err := NewReader("diff.mid", data, 0)
	if err != nil {
		return nil, diffStricter, err
	}
	var tracks [][]diffEvent
	for r.NextTrack() {
		var evs []diffEvent
		for r.Next() {
			ev := r.Event()
			var msg []byte
			switch ev.Kind {
			case KindChannel:
				msg = []byte{ev.Status, ev.Data1, ev.Data2}
				if t := ev.Type(); t == statusProgram || t == statusChanTouch {
					msg = msg[:2]
				}
			case KindSysEx, KindEscape:
				msg = append([]byte{ev.Status}, ev.Data...)
			case KindMeta:
				msg = append(append([]byte{0xFF, ev.Meta}, vlq(uint32(len(ev.Data)))...), ev.Data...)
				if ev.Meta == 0x2F {
					msg = []byte{0xFF, 0x2F, 0x00} // see "End of Track data" above
				}
			}
			evs = append(evs, diffEvent{ev.Tick, string(msg)})
		}
		tracks = append(tracks, evs)
	}
	if err := r.Err(); err != nil {
		return nil, diffStricter, err
	}
	switch {
	case len(data) >= 4 && string(data[:4]) == "RIFF":
		return tracks, diffRIFF, nil
	case len(data) >= 8 && !bytes.Equal(data[4:8], []byte{0, 0, 0, 6}):
		return tracks, diffHeaderLength, nil
	case r.RunningAfterMeta > 0:
		return tracks, diffRunningMeta, nil
	case r.SlackBytes > 0 || r.TrailingBytes() > 0:
		return tracks, diffSlack, nil
	case r.Header().FPS > 0:
		return tracks, diffSMPTE, nil
	}
	return tracks, diffNone, nil
}

// gomidiEvents reads data with gomidi into the same layout.
// A panic in gomidi is returned as an error.
func gomidiEvents(data []byte) (_ [][]diffEvent, err error) {
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("gomidi panicked: %v", p)
		}
	}()
	s, err := gsmf.ReadFrom(bytes.NewReader(data))
	if err != nil {
		return nil, err
	}
	var tracks [][]diffEvent
	for _, tr := range s.Tracks {
		var evs []diffEvent
		var tick int64
		for _, ev := range tr {
			tick += int64(ev.Delta)
			evs = append(evs, diffEvent{tick, string(ev.Message)})
		}
		tracks = append(tracks, evs)
	}
	return tracks, nil
}

// checkGomidi compares one input and returns the documented difference it falls
// under (diffNone when both accept with the same events). It fails t when both
// accept and disagree, or when gomidi rejects a file we read cleanly.
func checkGomidi(t testing.TB, data []byte) gomidiDiff {
	t.Helper()
	ours, kind, err := ourEvents(data)
	switch kind {
	case diffStricter, diffRunningMeta, diffSlack:
		// not safe to run gomidi: it would follow lengths we did not check
		_ = err
		return kind
	case diffHeaderLength, diffRIFF, diffSMPTE:
		// gomidi stops at the header or panics after reading what we read; safe to run
		if _, gerr := gomidiEvents(data); gerr == nil {
			t.Errorf("gomidi accepted a file with %v, which the documented differences say it rejects", kind)
		}
		return kind
	}
	theirs, gerr := gomidiEvents(data)
	if gerr != nil {
		t.Fatalf("we read the file cleanly but gomidi rejects it: %v", gerr)
	}
	if !reflect.DeepEqual(ours, theirs) {
		t.Fatalf("events differ\n ours   %+v\n gomidi %+v", ours, theirs)
	}
	return diffNone
}

func TestGomidiOpenTTD(t *testing.T) {
	paths := openttdPaths()
	if len(paths) == 0 {
		requireRefs(t, "no .mid files in %s: install Debian's openttd-openmsx package", openttdDir)
	}
	for _, p := range paths {
		data, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		t.Run(filepath.Base(p), func(t *testing.T) {
			if d := checkGomidi(t, data); d != diffNone {
				t.Errorf("difference %v on a real file", d)
			}
		})
	}
}

// TestGomidiHandMade covers each documented difference with a hand-made file, and
// for the damage gomidi can safely be shown, also what gomidi does with it.
func TestGomidiHandMade(t *testing.T) {
	notes := cat([]byte{0x00, 0x90, 60, 100, 0x60, 0x80, 60, 0}, eot)
	cases := []struct {
		name string
		data []byte
		want gomidiDiff
		// gomidiAccepts: for damage that is safe to feed to gomidi, whether it
		// returns no error (as the issue measured); nil when not run
		gomidiAccepts *bool
	}{
		{"spec format 0", specFormat0(), diffNone, nil},
		{"spec format 1", specFormat1(), diffNone, nil},
		{"SysEx and escapes", smf(0, 96, cat([]byte{0x00, 0xF0, 0x03, 0x43, 0x12, 0xF7, 0x00, 0xF7, 0x01, 0xF8}, notes)), diffNone, nil},
		{"SysEx in packets", smf(0, 96, cat([]byte{0x00, 0xF0, 0x02, 0x43, 0x12, 0x10, 0xF7, 0x02, 0x00, 0xF7}, notes)), diffNone, nil},
		{"unknown chunk", cat(header(0, 1, 96), chunk("XFIH", []byte{1, 2, 3}), chunk("MTrk", notes)), diffNone, nil},
		{"empty track", smf(1, 96, notes, nil), diffNone, nil},
		{"missing end of track", smf(0, 96, notes[:len(notes)-4]), diffNone, nil},
		{"SMPTE division", smf(0, 0xE728, notes), diffSMPTE, nil},
		{"format 2", smf(2, 96, notes, notes), diffNone, nil},
		{"header length 8", cat([]byte("MThd\x00\x00\x00\x08\x00\x00\x00\x01\x00\x60\x00\x00"), chunk("MTrk", notes)), diffHeaderLength, nil},
		{"RIFF RMID", riff(smf(0, 96, notes)), diffRIFF, nil},
		{"running status after meta", smf(0, 96, cat([]byte{0x00, 0x90, 60, 100, 0x00, 0xFF, 0x01, 0x01, 'x', 0x60, 60, 0}, eot)), diffRunningMeta, nil},
		{"bytes after end of track", smf(0, 96, cat(notes, []byte{0x00, 0x90})), diffSlack, nil},
		{"bytes after the last track", cat(smf(0, 96, notes), []byte("junk")), diffSlack, nil},
		{"data byte with no status", smf(0, 96, cat([]byte{0x00, 0x3C, 0x40}, eot)), diffStricter, ptr(true)},
		{"status carried over from the previous track", smf(1, 96, cat([]byte{0x00, 0x90, 60, 100, 0x10, 60, 0}, eot), cat([]byte{0x00, 62, 100, 0x10, 62, 0}, eot)), diffStricter, ptr(true)},
		{"more tracks declared than present", cat(header(1, 3, 96), chunk("MTrk", notes)), diffStricter, ptr(true)},
		{"random bytes after a valid header", cat(header(1, 1, 96), []byte{0x13, 0x57, 0x9B, 0xDF, 0x02, 0x46, 0x8A, 0xCE, 0x11}), diffStricter, nil},
		{"unterminated SysEx", smf(0, 96, cat([]byte{0x00, 0xF0, 0x03, 0x43, 0x12, 0x00}, eot)), diffStricter, ptr(true)},
		{"status byte as data byte", smf(0, 96, cat([]byte{0x00, 0x90, 60, 0x90, 0x00, 0x80, 60, 0}, eot)), diffStricter, ptr(true)},
		{"zero division", cat(header(0, 1, 0), chunk("MTrk", notes)), diffStricter, ptr(true)},
		{"5-byte VLQ SysEx length", smf(0, 96, []byte{0x00, 0xF0, 0xFF, 0xFF, 0xFF, 0xFF, 0x0F, 0x00, 0x00, 0x00, 0xFF, 0x2F, 0x00}), diffStricter, nil},
		{"meta length FF FF FF 7F", smf(0, 96, cat([]byte{0x00, 0xFF, 0x01, 0xFF, 0xFF, 0xFF, 0x7F, 0x00}, eot)), diffStricter, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := checkGomidi(t, c.data); got != c.want {
				t.Errorf("difference %v, want %v", got, c.want)
			}
			if c.gomidiAccepts != nil {
				_, err := gomidiEvents(c.data)
				if got := err == nil; got != *c.gomidiAccepts {
					t.Errorf("gomidi accepts: %v (err %v), want %v", got, err, *c.gomidiAccepts)
				}
			}
		})
	}
}

func ptr[T any](v T) *T { return &v }

// TestGomidiWritten reads files written by gomidi's SMF writer (running status on)
// from random events: an independent writer, so both readers must agree.
func TestGomidiWritten(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for i := range 50 {
		data := gomidiWrite(t, rng)
		t.Run(fmt.Sprint(i), func(t *testing.T) {
			if d := checkGomidi(t, data); d != diffNone {
				t.Errorf("difference %v on a gomidi-written file", d)
			}
			if _, err := Parse("w.mid", data, DefaultParseOptions()); err != nil {
				t.Errorf("Parse: %v", err)
			}
		})
	}
}

func gomidiWrite(t testing.TB, rng *rand.Rand) []byte {
	s := gsmf.New()
	s.TimeFormat = gsmf.MetricTicks(uint16(24 * (1 + rng.IntN(40))))
	for range 1 + rng.IntN(5) {
		var tr gsmf.Track
		for range rng.IntN(200) {
			delta := uint32(rng.IntN(4)) * uint32(rng.IntN(1000))
			ch := uint8(rng.IntN(16))
			switch rng.IntN(8) {
			case 0, 1, 2:
				tr.Add(delta, []byte{0x90 | ch, uint8(rng.IntN(128)), uint8(rng.IntN(128))})
			case 3, 4:
				tr.Add(delta, []byte{0x80 | ch, uint8(rng.IntN(128)), uint8(rng.IntN(128))})
			case 5:
				tr.Add(delta, []byte{0xB0 | ch, uint8(rng.IntN(128)), uint8(rng.IntN(128))})
			case 6:
				tr.Add(delta, []byte{0xC0 | ch, uint8(rng.IntN(128))})
			case 7:
				tr.Add(delta, gsmf.MetaTempo(float64(40+rng.IntN(200))))
			}
		}
		tr.Close(uint32(rng.IntN(100)))
		if err := s.Add(tr); err != nil {
			t.Fatal(err)
		}
	}
	data, err := s.Bytes()
	if err != nil {
		t.Fatal(err)
	}
	return data
}

// errIsOurs reports whether err is one of our positional errors (for the fuzz target).
func errIsOurs(err error) bool {
	var pe *ParseError
	return errors.As(err, &pe)
}

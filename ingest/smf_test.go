package ingest

import (
	"reflect"
	"testing"
)

// TestReaderEvents walks the SMF 1.0 format-0 example (Appendix 1.1) and checks every
// event as a whole value, running status resolved and offsets into the file.
func TestReaderEvents(t *testing.T) {
	data := specFormat0()
	r, err := NewReader("spec.mid", data, 0)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := r.Header(), (Header{Format: 0, Tracks: 1, Division: 96, TicksPerQuarter: 96}); got != want {
		t.Errorf("header %+v, want %+v", got, want)
	}
	var got []Event
	ntracks := 0
	for r.NextTrack() {
		ntracks++
		for r.Next() {
			ev := *r.Event()
			if ev.Data != nil {
				ev.Data = append([]byte{}, ev.Data...)
			}
			got = append(got, ev)
		}
	}
	if err := r.Err(); err != nil {
		t.Fatal(err)
	}
	ch := func(tick int64, delta uint32, off int64, status, d1, d2 byte) Event {
		return Event{Tick: tick, Delta: delta, Offset: off, Kind: KindChannel, Status: status, Data1: d1, Data2: d2}
	}
	meta := func(tick int64, off int64, typ byte, d ...byte) Event {
		if d == nil {
			d = []byte{}
		}
		return Event{Tick: tick, Offset: off, Kind: KindMeta, Status: 0xFF, Meta: typ, Data: d}
	}
	// the track body starts at byte 22; each offset is that of the event's first byte after its delta
	want := []Event{
		meta(0, 23, 0x58, 0x04, 0x02, 0x18, 0x08),
		meta(0, 31, 0x51, 0x07, 0xA1, 0x20),
		ch(0, 0, 38, 0xC0, 0x05, 0),
		ch(0, 0, 41, 0xC1, 0x2E, 0),
		ch(0, 0, 44, 0xC2, 0x46, 0),
		ch(0, 0, 47, 0x92, 0x30, 0x60),
		ch(0, 0, 51, 0x92, 0x3C, 0x60), // running status: the offset is the first data byte
		ch(96, 96, 54, 0x91, 0x43, 0x40),
		ch(192, 96, 58, 0x90, 0x4C, 0x20),
		ch(384, 192, 63, 0x82, 0x30, 0x40),
		ch(384, 0, 67, 0x82, 0x3C, 0x40),
		ch(384, 0, 70, 0x81, 0x43, 0x40),
		ch(384, 0, 74, 0x80, 0x4C, 0x40),
		meta(384, 78, 0x2F),
	}
	if ntracks != 1 || !reflect.DeepEqual(got, want) {
		t.Errorf("%d tracks, events\n got %+v\nwant %+v", ntracks, got, want)
	}
	if r.MissingEOT != 0 || r.SlackBytes != 0 || r.TrailingBytes() != 0 || r.RunningAfterMeta != 0 {
		t.Errorf("counters %d %d %d %d", r.MissingEOT, r.SlackBytes, r.TrailingBytes(), r.RunningAfterMeta)
	}
}

func TestReaderHeaderSMPTE(t *testing.T) {
	// SMF 1.0 "Header Chunks": E7 28 is -25 fps with 40 ticks per frame.
	r, err := NewReader("s.mid", smf(0, 0xE728, eot), 0)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := r.Header(), (Header{Format: 0, Tracks: 1, Division: 0xE728, FPS: 25, TicksPerFrame: 40}); got != want {
		t.Errorf("header %+v, want %+v", got, want)
	}
}

// TestReaderNoAllocs checks the walk allocates nothing, Reset included.
func TestReaderNoAllocs(t *testing.T) {
	data := cat(specFormat1(), []byte{})
	var r Reader
	n := 0
	allocs := testing.AllocsPerRun(100, func() {
		if err := r.Reset("a.mid", data, 0); err != nil {
			t.Fatal(err)
		}
		for r.NextTrack() {
			for r.Next() {
				n++
			}
		}
		if r.Err() != nil {
			t.Fatal(r.Err())
		}
	})
	if allocs != 0 || n == 0 {
		t.Errorf("%v allocations per walk (%d events)", allocs, n)
	}
}

// TestReaderStopsAfterError checks that Next and NextTrack stay false after an error.
func TestReaderStopsAfterError(t *testing.T) {
	r, err := NewReader("a.mid", smf(1, 96, cat([]byte{0x00, 0x3C, 0x40}, eot), eot), 0)
	if err != nil {
		t.Fatal(err)
	}
	if !r.NextTrack() {
		t.Fatal("no first track")
	}
	if r.Next() {
		t.Fatal("Next read an event with no status")
	}
	if r.Next() || r.NextTrack() || r.Err() == nil {
		t.Errorf("reader went on after %v", r.Err())
	}
}

// TestReaderSkipTrack checks that a track left half read is skipped without the
// end-of-track checks (its SysEx may be ended later in the part not read).
func TestReaderSkipTrack(t *testing.T) {
	data := smf(1, 96, cat([]byte{0x00, 0xF0, 0x01, 0x43, 0x00, 0xF7, 0x01, 0xF7}, eot), cat([]byte{0x00, 0x90, 60, 100}, eot))
	r, err := NewReader("a.mid", data, 0)
	if err != nil {
		t.Fatal(err)
	}
	var got []int64
	for r.NextTrack() {
		if r.Track() == 0 {
			r.Next() // the open SysEx only
			continue
		}
		for r.Next() {
			got = append(got, r.Event().Offset)
		}
	}
	if err := r.Err(); err != nil {
		t.Fatal(err)
	}
	// track 1's chunk starts at 14+8+12 = 34; its body at 42; events at 43 and 47
	if want := []int64{43, 47}; !reflect.DeepEqual(got, want) {
		t.Errorf("track 1 event offsets %v, want %v", got, want)
	}
	if r.MissingEOT != 0 {
		t.Errorf("MissingEOT %d for a skipped track", r.MissingEOT)
	}
}

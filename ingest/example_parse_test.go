package ingest_test

import (
	"fmt"

	"github.com/relshard/relshard/ingest"
)

// The format-0 example file of SMF 1.0 (Appendix 1.1): 96 ticks per quarter, 120 BPM,
// three channels, running status.
var specExample = []byte{
	'M', 'T', 'h', 'd', 0, 0, 0, 6, 0, 0, 0, 1, 0, 0x60,
	'M', 'T', 'r', 'k', 0, 0, 0, 0x3B,
	0x00, 0xFF, 0x58, 0x04, 0x04, 0x02, 0x18, 0x08,
	0x00, 0xFF, 0x51, 0x03, 0x07, 0xA1, 0x20,
	0x00, 0xC0, 0x05,
	0x00, 0xC1, 0x2E,
	0x00, 0xC2, 0x46,
	0x00, 0x92, 0x30, 0x60,
	0x00, 0x3C, 0x60,
	0x60, 0x91, 0x43, 0x40,
	0x60, 0x90, 0x4C, 0x20,
	0x81, 0x40, 0x82, 0x30, 0x40,
	0x00, 0x3C, 0x40,
	0x00, 0x81, 0x43, 0x40,
	0x00, 0x80, 0x4C, 0x40,
	0x00, 0xFF, 0x2F, 0x00,
}

func ExampleParse() {
	pieces, err := ingest.Parse("example.mid", specExample, ingest.DefaultParseOptions())
	if err != nil {
		fmt.Println(err)
		return
	}
	p := pieces[0]
	fmt.Printf("format %d, %d ticks per quarter, meter %d/%d\n", p.Format, p.TicksPerQuarter, p.MeterAt(0).Num, p.MeterAt(0).Denom)
	for _, n := range p.Notes {
		fmt.Printf("key %d vel %d ch %d program %d: ticks %d-%d, %.2f-%.2f s\n",
			n.Pitch, n.Velocity, n.Channel, n.Program, n.StartTick, n.EndTick, n.Start, n.End)
	}
	// Output:
	// format 0, 96 ticks per quarter, meter 4/4
	// key 48 vel 96 ch 2 program 70: ticks 0-384, 0.00-2.00 s
	// key 60 vel 96 ch 2 program 70: ticks 0-384, 0.00-2.00 s
	// key 67 vel 64 ch 1 program 46: ticks 96-384, 0.50-2.00 s
	// key 76 vel 32 ch 0 program 5: ticks 192-384, 1.00-2.00 s
}

func ExampleParse_error() {
	_, err := ingest.Parse("broken.mid", specExample[:30], ingest.DefaultParseOptions())
	fmt.Println(err)
	// Output:
	// broken.mid: track 0: byte 18: chunk length past end of data: chunk length 59, 8 bytes remain
}

func ExampleReader() {
	r, err := ingest.NewReader("example.mid", specExample, 0)
	if err != nil {
		fmt.Println(err)
		return
	}
	for r.NextTrack() {
		for r.Next() {
			ev := r.Event()
			if ev.Kind == ingest.KindChannel && ev.Type() == 0x90 {
				fmt.Printf("tick %d: note-on channel %d key %d velocity %d\n", ev.Tick, ev.Channel(), ev.Data1, ev.Data2)
			}
		}
	}
	if err := r.Err(); err != nil {
		fmt.Println(err)
	}
	// Output:
	// tick 0: note-on channel 2 key 48 velocity 96
	// tick 0: note-on channel 2 key 60 velocity 96
	// tick 96: note-on channel 1 key 67 velocity 64
	// tick 192: note-on channel 0 key 76 velocity 32
}

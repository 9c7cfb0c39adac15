package ingesttest_test

import (
	"encoding/binary"
	"fmt"
	"log"
	"testing"

	"github.com/relshard/relshard/ingest/ingesttest"
)

// fatalTB stands in for the *testing.T a test would pass, which an example does not
// have: the builders call only Helper and Fatalf.
type fatalTB struct{ testing.TB }

func (fatalTB) Helper() {}

func (fatalTB) Fatalf(format string, args ...any) { log.Fatalf(format, args...) }

func ExampleSMF() {
	data := ingesttest.SMF(fatalTB{}, 96, false, []ingesttest.Note{
		{Start: 0, Dur: 96, Key: 60, Vel: 90},
		{Start: 96, Dur: 48, Key: 64, Vel: 90},
	})
	// SMF 1.0, "Header Chunks": the chunk type, a 4-byte length, then format, number
	// of tracks and division, each 2 bytes.
	fmt.Println(string(data[:4]))
	fmt.Printf("format %d, %d track, %d ticks per quarter note\n",
		binary.BigEndian.Uint16(data[8:]), binary.BigEndian.Uint16(data[10:]), binary.BigEndian.Uint16(data[12:]))
	// Output:
	// MThd
	// format 0, 1 track, 96 ticks per quarter note
}

package mutate

import (
	"bytes"
	"context"
	"encoding/binary"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"github.com/relshard/relshard/sampledata"
)

// specFormat0 is the format-0 example file printed in SMF 1.0 (its appendix of example
// files, from memory), as committed in ingest's testdata.
func specFormat0(t testing.TB) []byte {
	t.Helper()
	data, err := os.ReadFile(filepath.Join("..", "testdata", "spec-format0.mid"))
	if err != nil {
		t.Fatal(err)
	}
	return data
}

// TestWalkSpecExample checks the walker on the spec's example: a 14-byte header
// chunk, one track chunk of 0x3B = 59 bytes holding 14 events (SMF 1.0's format-0
// example: its byte listing: 22 bytes of header chunk and track chunk header, then the events).
func TestWalkSpecExample(t *testing.T) {
	d := specFormat0(t)
	l := walk(d)
	wantChunks := []chunk{
		{start: 0, body: 8, end: 14, smf: true},
		{start: 14, body: 22, end: 81, track: true, smf: true},
	}
	if !reflect.DeepEqual(l.chunks, wantChunks) {
		t.Fatalf("chunks %+v, want %+v", l.chunks, wantChunks)
	}
	// Event starts from the spec's listing: two metas, three program changes, the
	// notes (two under running status), a two-byte delta, end of track.
	wantStarts := []int{22, 30, 37, 40, 43, 46, 50, 53, 57, 61, 66, 69, 73, 77}
	var starts []int
	running := 0
	for _, e := range l.events[0] {
		starts = append(starts, e.start)
		if e.status < 0 {
			running++
		}
	}
	if !reflect.DeepEqual(starts, wantStarts) || running != 2 {
		t.Errorf("event starts %v (%d under running status), want %v (2)", starts, running, wantStarts)
	}
	if last := l.events[0][len(l.events[0])-1]; last.end != 81 || last.kind != metaStatus {
		t.Errorf("last event %+v, want the end-of-track meta ending at byte 81", last)
	}
	if got, want := l.boundaries(len(d)), []int{4, 8, 14, 18, 22}; !reflect.DeepEqual(got, want) {
		t.Errorf("boundaries %v, want %v", got, want)
	}
}

// TestTruncateEveryBoundary: the chunk-boundary cuts of the spec example are exactly
// the prefixes ending at each boundary.
func TestTruncateEveryBoundary(t *testing.T) {
	d := specFormat0(t)
	var got []int
	for _, c := range Mutants(1, Base{Name: "spec.mid", Data: d}) {
		if c.Op == OpTruncateChunk {
			if !bytes.Equal(c.Data, d[:len(c.Data)]) {
				t.Errorf("%s is not a prefix of the base", c.Name)
			}
			got = append(got, len(c.Data))
		}
	}
	if want := []int{4, 8, 14, 18, 22}; !reflect.DeepEqual(got, want) {
		t.Errorf("cut lengths %v, want %v", got, want)
	}
}

// TestRIFFBoundaries: a RIFF RMID wrapping adds its own boundaries, and splices keep
// the RIFF sizes consistent (Microsoft RIFF: "RIFF" <size> "RMID", then chunks).
func TestRIFFBoundaries(t *testing.T) {
	smf := specFormat0(t)
	var b bytes.Buffer
	b.WriteString("RIFF")
	binary.Write(&b, binary.LittleEndian, uint32(4+8+len(smf)+1))
	b.WriteString("RMIDdata")
	binary.Write(&b, binary.LittleEndian, uint32(len(smf)))
	b.Write(smf)
	b.WriteByte(0) // pad to even size
	d := b.Bytes()
	l := walk(d)
	if got, want := l.boundaries(len(d)), []int{4, 8, 12, 16, 20, 24, 28, 34, 38, 42, 101}; !reflect.DeepEqual(got, want) {
		t.Errorf("boundaries %v, want %v", got, want)
	}
	for _, c := range Mutants(3, Base{Name: "w.rmi", Data: d}) {
		if c.Op != OpShortTrack && c.Op != OpVLQ {
			continue
		}
		if got, want := int(binary.LittleEndian.Uint32(c.Data[4:])), len(c.Data)-8; got != want {
			t.Errorf("%s: RIFF size %d, want %d", c.Name, got, want)
		}
		if got, want := int(binary.LittleEndian.Uint32(c.Data[16:])), len(c.Data)-21; got != want {
			t.Errorf("%s: data chunk size %d, want %d", c.Name, got, want)
		}
	}
}

// bases makes a small generated corpus: its first nine files are one of each kind,
// so formats 0, 1 and 2 and SMPTE division are among them.
func bases(t testing.TB, n int) []Base {
	t.Helper()
	var out []Base
	err := sampledata.Generate(context.Background(), sampledata.Config{Files: n, Seed: 5, Workers: 1}, func(f sampledata.File) error {
		out = append(out, Base{Name: filepath.Base(f.Path), Data: f.Data})
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

func TestCorpus(t *testing.T) {
	bs := bases(t, 12)
	before := make([][]byte, len(bs))
	for i, b := range bs {
		before[i] = bytes.Clone(b.Data)
	}
	cases := Corpus(42, bs)
	if len(cases) < 500 {
		t.Errorf("%d cases from %d bases, want at least 500", len(cases), len(bs))
	}
	names := map[string]bool{}
	ops := map[Op]int{}
	byName := map[string][]byte{}
	for _, b := range bs {
		byName[b.Name] = b.Data
	}
	for _, c := range cases {
		if names[c.Name] {
			t.Errorf("name %s twice", c.Name)
		}
		names[c.Name] = true
		ops[c.Op]++
		if bytes.Equal(c.Data, byName[c.Base]) {
			t.Errorf("%s equals its base", c.Name)
		}
		if c.Detail == "" {
			t.Errorf("%s has no detail", c.Name)
		}
		// Damage the case: the base must not change (no shared memory).
		if len(c.Data) > 0 {
			c.Data[0] ^= 0xFF
		}
	}
	for i, b := range bs {
		if !bytes.Equal(b.Data, before[i]) {
			t.Errorf("base %s changed", b.Name)
		}
	}
	for _, op := range Ops {
		if ops[op] == 0 {
			t.Errorf("no case of %s", op)
		}
	}
	t.Logf("%d cases by op: %v", len(cases), ops)
}

func TestCorpusDeterministic(t *testing.T) {
	bs := bases(t, 4)
	a, b := Corpus(9, bs), Corpus(9, bs)
	if !reflect.DeepEqual(a, b) {
		t.Fatal("two calls with the same seed differ")
	}
	c := Corpus(10, bs)
	if reflect.DeepEqual(a, c) {
		t.Fatal("another seed gives the same cases")
	}
}

// TestSplicesKeepChunkLengths: the ops that splice bytes inside a track fix its
// length field, so the chunk headers still tile the file exactly and the damage is
// met inside the track, not at its length.
func TestSplicesKeepChunkLengths(t *testing.T) {
	for _, c := range Corpus(2, bases(t, 9)) {
		switch c.Op {
		case OpShortTrack, OpVLQ, OpRunningStatus:
		case OpHugeLength:
			if !bytes.Contains([]byte(c.Detail), []byte("0x0FFFFFFF")) {
				continue // the chunk-length variants
			}
		default:
			continue
		}
		p := 0
		for p+8 <= len(c.Data) {
			p += 8 + int(binary.BigEndian.Uint32(c.Data[p+4:]))
		}
		if p != len(c.Data) {
			t.Errorf("%s (%s): chunks end at %d of %d bytes", c.Name, c.Detail, p, len(c.Data))
		}
	}
}

func ExampleMutants() {
	smf := []byte("MThd\x00\x00\x00\x06\x00\x00\x00\x01\x00\x60" + // SMF 1.0 header: format 0, one track, 96 ticks per quarter
		"MTrk\x00\x00\x00\x0C\x00\x90\x3C\x40\x60\x80\x3C\x00\x00\xFF\x2F\x00") // a note, end of track
	for _, c := range Mutants(1, Base{Name: "tune.mid", Data: smf}) {
		if c.Op == OpTruncateChunk || c.Op == OpRunningStatus {
			fmt.Printf("%s: %s\n", c.Name, c.Detail)
		}
	}
	// Output:
	// tune-truncate-chunk-000.mid: cut at byte 4 (a chunk boundary)
	// tune-truncate-chunk-001.mid: cut at byte 8 (a chunk boundary)
	// tune-truncate-chunk-002.mid: cut at byte 14 (a chunk boundary)
	// tune-truncate-chunk-003.mid: cut at byte 18 (a chunk boundary)
	// tune-truncate-chunk-004.mid: cut at byte 22 (a chunk boundary)
	// tune-running-status-000.mid: first status byte of track 0 (byte 23) removed
	// tune-running-status-001.mid: 1 status bytes of track 0 removed, all but the first
	// tune-running-status-002.mid: status at byte 27 replaced by the undefined 0xF4
}

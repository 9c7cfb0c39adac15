package tokenize_test

import (
	"bytes"
	"fmt"
	"log"
	"strings"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/tokenize"
)

// twoNotes is a middle C held half a second, then an E for a quarter second, at the
// SMF 1.0 default tempo (120 BPM) and 480 ticks per quarter.
func twoNotes() *ingest.Piece {
	return &ingest.Piece{TicksPerQuarter: 480, Notes: []ingest.Note{
		{StartTick: 0, EndTick: 480, Start: 0, End: 0.5, Pitch: 60, Velocity: 96},
		{StartTick: 480, EndTick: 720, Start: 0.5, End: 0.75, Pitch: 64, Velocity: 96},
	}}
}

func ExampleNewVocab() {
	v, err := tokenize.NewVocab(tokenize.DefaultConfig())
	if err != nil {
		log.Fatal(err)
	}
	fmt.Println(v.Size(), v.Label(0), v.Label(1), v.Label(2), v.Label(3), v.Label(131), v.Label(259), v.Label(359))
	// Output: 391 pad begin end on.0 off.0 dt.10 vel.0
}

func ExampleEncoder_Encode() {
	e, err := tokenize.NewEncoder(tokenize.DefaultConfig())
	if err != nil {
		log.Fatal(err)
	}
	stream, stats, err := e.Encode(twoNotes(), tokenize.Identity, nil)
	if err != nil {
		log.Fatal(err)
	}
	var words []string
	for _, t := range stream {
		words = append(words, fmt.Sprintf("%s@%d", e.Vocab().Label(t.ID), t.Time))
	}
	fmt.Println(strings.Join(words, " "))
	fmt.Println(stats.Encoded, "notes,", stats.Tokens, "tokens, time in", e.TimeUnit())
	// Output:
	// begin@0 vel.24@0 on.60@0 dt.500@500 off.60@500 on.64@500 dt.250@750 off.64@750 end@750
	// 2 notes, 9 tokens, time in ms
}

func ExampleEncoder_Encode_grid() {
	cfg := tokenize.DefaultConfig()
	cfg.Encoding = tokenize.Grid
	e, err := tokenize.NewEncoder(cfg)
	if err != nil {
		log.Fatal(err)
	}
	stream, _, err := e.Encode(twoNotes(), tokenize.Identity, nil)
	if err != nil {
		log.Fatal(err)
	}
	var words []string
	for _, t := range stream {
		words = append(words, fmt.Sprintf("%s@%d", e.Vocab().Label(t.ID), t.Time))
	}
	fmt.Println(strings.Join(words, " "))
	// Output:
	// begin@0 bar@0 meter.4/4@0 tempo.19@0 pos.0@0 inst.piano@0 pitch.60@0 dur.12@0 vel.24@0 pos.12@12 pitch.64@12 dur.6@12 vel.24@12 end@12
}

func ExampleDecode() {
	cfg := tokenize.DefaultConfig()
	e, err := tokenize.NewEncoder(cfg)
	if err != nil {
		log.Fatal(err)
	}
	stream, _, err := e.Encode(twoNotes(), tokenize.Identity, nil)
	if err != nil {
		log.Fatal(err)
	}
	ids := make([]int32, len(stream))
	for i, t := range stream {
		ids[i] = t.ID
	}
	p, err := tokenize.Decode(ids, cfg)
	if err != nil {
		log.Fatal(err)
	}
	for _, n := range p.Notes {
		// Velocity 96 is in bin 24 (96..99), which decodes to its middle, 97.
		fmt.Printf("key %d from %.3f s to %.3f s, velocity %d\n", n.Pitch, n.Start, n.End, n.Velocity)
	}
	var smf bytes.Buffer
	if err := tokenize.WriteSMF(&smf, p); err != nil {
		log.Fatal(err)
	}
	fmt.Println(string(smf.Bytes()[:4]))
	// Output:
	// key 60 from 0.000 s to 0.500 s, velocity 97
	// key 64 from 0.500 s to 0.750 s, velocity 97
	// MThd
}

func ExampleEncoder_Windows() {
	cfg := tokenize.DefaultConfig()
	cfg.MaxLen, cfg.MinLen = 16, 0
	cfg.Transpose = []int{0, 5}
	e, err := tokenize.NewEncoder(cfg)
	if err != nil {
		log.Fatal(err)
	}
	p := twoNotes()
	for i := range 4 { // four more notes
		p.Notes = append(p.Notes, ingest.Note{StartTick: int64(720 + 240*i), EndTick: int64(960 + 240*i),
			Start: 0.75 + 0.25*float64(i), End: 1 + 0.25*float64(i), Pitch: uint8(65 + i), Velocity: 50})
	}
	err = e.Windows(p, func(w tokenize.Window) error {
		fmt.Printf("%s window %d: %d tokens from stream token %d, %d restated, first %s\n",
			w.Variant, w.Index, len(w.Tokens), w.Start, w.Prefix, e.Vocab().Label(w.Tokens[0].ID))
		return nil
	})
	if err != nil {
		log.Fatal(err)
	}
	// Output:
	// t0 s1 window 0: 16 tokens from stream token 0, 0 restated, first begin
	// t0 s1 window 1: 7 tokens from stream token 16, 1 restated, first vel.12
	// t+5 s1 window 0: 16 tokens from stream token 0, 0 restated, first begin
	// t+5 s1 window 1: 7 tokens from stream token 16, 1 restated, first vel.12
}

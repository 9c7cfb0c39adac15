package sampledata_test

import (
	"context"
	"fmt"

	"github.com/relshard/relshard/sampledata"
)

func ExampleGenerate() {
	cfg := sampledata.Config{Files: 9, Damaged: 2, Seed: 7}
	err := sampledata.Generate(context.Background(), cfg, func(f sampledata.File) error {
		fmt.Printf("%-21s %s\n", f.Kind, f.Path)
		return nil
	})
	if err != nil {
		fmt.Println(err)
	}
	// Output:
	// performance           velmora-recitals/00000-foggy-sparrow-elegy.mid
	// transposed            velmora-recitals/00001-foggy-sparrow-elegy-alt-key.mid
	// ensemble              tollemere-band/00002-ember-staircase-march.mid
	// resaved               tollemere-band/00003-ember-staircase-march-96ppq.mid
	// lead-sheet            tollemere-band/00004-slate-clocktower-fanfare.mid
	// timecode-performance  velmora-recitals/00005-velvet-ferry-elegy.mid
	// pattern-bank          kestrel-lane/00006-willow-signal-box-patterns.mid
	// swing                 kestrel-lane/00007-cinder-kite-vamp.mid
	// odd-meter             kestrel-lane/00008-northern-canal-vamp.mid
	// damaged/empty         tollemere-salvage/00009-slate-attic-reel-empty.mid
	// damaged/random-bytes  tollemere-salvage/00010-amber-mill-march-random-bytes.mid
}

func ExampleDamagedCases() {
	for _, c := range sampledata.DamagedCases() {
		fmt.Printf("%-28s %-20s track %2d  %q\n", c.Name+c.Ext, c.WantErr, c.WantTrack, c.WantText)
	}
	// Output:
	// empty.mid                    ErrEmpty             track -1  "byte 0: empty file"
	// random-bytes.mid             ErrBadMagic          track -1  "byte 0: not a Standard MIDI File"
	// bad-magic.mid                ErrBadMagic          track -1  "byte 0: not a Standard MIDI File"
	// bad-header-format.mid        ErrBadHeader         track -1  "byte 8: bad header: format 3"
	// bad-header-length.mid        ErrBadHeader         track -1  "byte 4: bad header: header length 4"
	// zero-tracks.mid              ErrNoTracks          track -1  "byte 10: zero tracks"
	// zero-division.mid            ErrZeroDivision      track -1  "byte 12: zero division"
	// truncated-header.mid         ErrTruncated         track -1  "byte 11: truncated"
	// truncated-mid-track.mid      ErrChunkLength       track  1  "chunk length past end of data"
	// truncated-between-tracks.mid ErrTruncated         track  2  "truncated: header declares"
	// chunk-length-past-end.mid    ErrChunkLength       track  0  "byte 18: chunk length past end of data: chunk length 268435455"
	// bad-vlq.mid                  ErrBadVLQ            track  1  "delta time longer than 4 bytes"
	// no-running-status.mid        ErrRunningStatus     track  1  "data byte with no running status"
	// unterminated-sysex.mid       ErrUnterminatedSysEx track  1  "SysEx not ended by F7 before end of track"
	// not-gzip.mid.gz              ErrNotGzip           track -1  "not gzip data"
}

package sampledata

import (
	"encoding/binary"
	"fmt"
)

// DamagedCase is one kind of broken file in the damaged set, with the error the
// project's reader (package ingest) must report for it.
type DamagedCase struct {
	// Name is the case's name, used in the file name and in the Kind "damaged/<Name>".
	Name string
	// WantErr names the ingest sentinel error the file must produce (errors.Is),
	// e.g. "ErrTruncated".
	WantErr string
	// WantText is a substring of the error message (the sentinel's text, and where
	// it is fixed, the byte offset or track).
	WantText string
	// WantTrack is the track index the error names, -1 for errors of the header or
	// of the file as a whole.
	WantTrack int
	// Ext is the file-name extension: ".mid", or ".mid.gz" for the case of a file
	// named as gzip-compressed that is not.
	Ext string
	// Doc says what is wrong with the bytes.
	Doc string

	build func(r *rng, good []byte) []byte
}

// damagedCases is the damaged set. Offsets are those of SMF 1.0's layout: the header
// chunk is "MThd", a 4-byte length (6), then format (bytes 8-9), track count (10-11)
// and division (12-13); track chunks follow from byte 14.
var damagedCases = []DamagedCase{
	{Name: "empty", WantTrack: -1, WantErr: "ErrEmpty", WantText: "byte 0: empty file", Ext: ".mid",
		Doc:   "zero bytes: a file created but never written",
		build: func(*rng, []byte) []byte { return []byte{} }},
	{Name: "random-bytes", WantTrack: -1, WantErr: "ErrBadMagic", WantText: "byte 0: not a Standard MIDI File", Ext: ".mid",
		Doc: "64 to 512 random bytes that do not begin with MThd or RIFF",
		build: func(r *rng, _ []byte) []byte {
			b := make([]byte, r.between(64, 512))
			for i := range b {
				b[i] = byte(r.intn(256))
			}
			if b[0] == 'M' || b[0] == 'R' {
				b[0] ^= 0x20
			}
			return b
		}},
	{Name: "bad-magic", WantTrack: -1, WantErr: "ErrBadMagic", WantText: "byte 0: not a Standard MIDI File", Ext: ".mid",
		Doc:   "a good file whose header id reads \"MTHd\" (a case-mangling transfer)",
		build: func(_ *rng, g []byte) []byte { b := clone(g); b[2] = 'H'; return b }},
	{Name: "bad-header-format", WantTrack: -1, WantErr: "ErrBadHeader", WantText: "byte 8: bad header: format 3", Ext: ".mid",
		Doc:   "the header's format field is 3; SMF 1.0 defines only 0, 1 and 2",
		build: func(_ *rng, g []byte) []byte { b := clone(g); binary.BigEndian.PutUint16(b[8:], 3); return b }},
	{Name: "bad-header-length", WantTrack: -1, WantErr: "ErrBadHeader", WantText: "byte 4: bad header: header length 4", Ext: ".mid",
		Doc:   "the header chunk declares 4 bytes; SMF 1.0 requires at least 6",
		build: func(_ *rng, g []byte) []byte { b := clone(g); binary.BigEndian.PutUint32(b[4:], 4); return b }},
	{Name: "zero-tracks", WantTrack: -1, WantErr: "ErrNoTracks", WantText: "byte 10: zero tracks", Ext: ".mid",
		Doc:   "the header declares 0 tracks",
		build: func(_ *rng, g []byte) []byte { b := clone(g); binary.BigEndian.PutUint16(b[10:], 0); return b }},
	{Name: "zero-division", WantTrack: -1, WantErr: "ErrZeroDivision", WantText: "byte 12: zero division", Ext: ".mid",
		Doc:   "the header's division is 0 ticks per quarter note",
		build: func(_ *rng, g []byte) []byte { b := clone(g); binary.BigEndian.PutUint16(b[12:], 0); return b }},
	{Name: "truncated-header", WantTrack: -1, WantErr: "ErrTruncated", WantText: "byte 11: truncated", Ext: ".mid",
		Doc:   "only the first 11 bytes: the file ends inside the header chunk",
		build: func(_ *rng, g []byte) []byte { return clone(g[:11]) }},
	{Name: "truncated-mid-track", WantTrack: 1, WantErr: "ErrChunkLength", WantText: "chunk length past end of data", Ext: ".mid",
		Doc: "cut off in the middle of track 1, so its declared chunk length runs past the end of the file " +
			"(error at the length field, byte 4 of the chunk)",
		build: func(r *rng, g []byte) []byte {
			sp := chunkSpans(g)
			t := sp[1]
			return clone(g[:t[0]+8+(t[1]-t[0]-8)/2])
		}},
	{Name: "truncated-between-tracks", WantTrack: 2, WantErr: "ErrTruncated", WantText: "truncated: header declares", Ext: ".mid",
		Doc:   "cut off just after track 1 of a file whose header declares more tracks (the error names track 2, the first missing one)",
		build: func(_ *rng, g []byte) []byte { return clone(g[:chunkSpans(g)[1][1]]) }},
	{Name: "chunk-length-past-end", WantTrack: 0, WantErr: "ErrChunkLength", WantText: "byte 18: chunk length past end of data: chunk length 268435455", Ext: ".mid",
		Doc: "track 0's chunk length field reads 0x0FFFFFFF, far past the end of the file",
		build: func(_ *rng, g []byte) []byte {
			b := clone(g)
			binary.BigEndian.PutUint32(b[18:], 0x0FFFFFFF)
			return b
		}},
	{Name: "bad-vlq", WantTrack: 1, WantErr: "ErrBadVLQ", WantText: "delta time longer than 4 bytes", Ext: ".mid",
		Doc: "track 1 begins with a delta time of five bytes (80 80 80 80 00); SMF 1.0 caps " +
			"variable-length quantities at four",
		build: func(_ *rng, g []byte) []byte {
			return spliceTrack(g, 1, []byte{0x80, 0x80, 0x80, 0x80, 0x00, 0x90, 60, 100})
		}},
	{Name: "no-running-status", WantTrack: 1, WantErr: "ErrRunningStatus", WantText: "data byte with no running status", Ext: ".mid",
		Doc: "track 1's first event is a data byte (3C 64) with no status byte before it",
		build: func(_ *rng, g []byte) []byte {
			return spliceTrack(g, 1, []byte{0x00, 0x3C, 0x64})
		}},
	{Name: "unterminated-sysex", WantTrack: 1, WantErr: "ErrUnterminatedSysEx", WantText: "SysEx not ended by F7 before end of track", Ext: ".mid",
		Doc: "track 1 begins with a SysEx (F0 04 7E 7F 09 01, General MIDI System On without its F7) " +
			"that no F7 continuation ever ends",
		build: func(_ *rng, g []byte) []byte {
			return spliceTrack(g, 1, []byte{0x00, 0xF0, 0x04, 0x7E, 0x7F, 0x09, 0x01})
		}},
	{Name: "not-gzip", WantTrack: -1, WantErr: "ErrNotGzip", WantText: "not gzip data", Ext: ".mid.gz",
		Doc:   "a plain, good SMF named .mid.gz: it does not begin with the gzip magic 1F 8B (RFC 1952)",
		build: func(_ *rng, g []byte) []byte { return clone(g) }},
}

// DamagedCases returns the damaged set's cases, in the order Generate cycles
// through them.
func DamagedCases() []DamagedCase {
	out := make([]DamagedCase, len(damagedCases))
	copy(out, damagedCases)
	return out
}

func clone(b []byte) []byte { return append([]byte(nil), b...) }

// chunkSpans returns [start, end) of every chunk of a well-formed SMF written by this
// package, the header chunk first.
func chunkSpans(b []byte) [][2]int {
	var out [][2]int
	for p := 0; p+8 <= len(b); {
		n := int(binary.BigEndian.Uint32(b[p+4:]))
		out = append(out, [2]int{p, p + 8 + n})
		p += 8 + n
	}
	return out[1:] // the tracks; index 0 is track 0
}

// spliceTrack inserts body at the start of track t's events and fixes its length.
func spliceTrack(g []byte, t int, body []byte) []byte {
	sp := chunkSpans(g)[t]
	out := make([]byte, 0, len(g)+len(body))
	out = append(out, g[:sp[0]+8]...)
	out = append(out, body...)
	out = append(out, g[sp[0]+8:]...)
	binary.BigEndian.PutUint32(out[sp[0]+4:], uint32(sp[1]-sp[0]-8+len(body)))
	return out
}

// makeDamaged makes damaged file j (file index i of the corpus) from a good ensemble
// arrangement with at least three tracks.
func makeDamaged(seed uint64, i, j int) (File, error) {
	c := damagedCases[j%len(damagedCases)]
	p := compose(seed, slot{index: i, kind: KindEnsemble})
	good, err := render(p)
	if err != nil {
		return File{}, fmt.Errorf("generate damaged file %d: %w", i, err)
	}
	r := newRNG(seed^tagDup, splitmix64(uint64(i))^0xda)
	return File{
		Path: DatasetSalvage + "/" + fileStem(i, p.slug+"-"+c.Name) + c.Ext,
		Data: c.build(r, good),
		Kind: KindDamaged + "/" + c.Name,
	}, nil
}

package ingest

import "encoding/binary"

// Helpers that build SMF bytes by hand for the tests, following the layout of
// SMF 1.0 ("Chunks", "Header Chunks", "Track Chunks").

// vlq encodes v as an SMF variable-length quantity (SMF 1.0, "Variable-length quantities").
func vlq(v uint32) []byte {
	b := []byte{byte(v & 0x7F)}
	for v >>= 7; v > 0; v >>= 7 {
		b = append([]byte{byte(v&0x7F) | 0x80}, b...)
	}
	return b
}

// chunk returns id, a big-endian length and body.
func chunk(id string, body []byte) []byte {
	b := append([]byte(id), 0, 0, 0, 0)
	binary.BigEndian.PutUint32(b[4:], uint32(len(body)))
	return append(b, body...)
}

// header returns an MThd chunk with a 6-byte body.
func header(format, tracks int, division uint16) []byte {
	b := make([]byte, 6)
	binary.BigEndian.PutUint16(b, uint16(format))
	binary.BigEndian.PutUint16(b[2:], uint16(tracks))
	binary.BigEndian.PutUint16(b[4:], division)
	return chunk("MThd", b)
}

// smf joins a header and track bodies (each wrapped in an MTrk chunk).
func smf(format int, division uint16, tracks ...[]byte) []byte {
	b := header(format, len(tracks), division)
	for _, t := range tracks {
		b = append(b, chunk("MTrk", t)...)
	}
	return b
}

// cat concatenates byte slices.
func cat(parts ...[]byte) []byte {
	var b []byte
	for _, p := range parts {
		b = append(b, p...)
	}
	return b
}

// eot is a zero-delta End of Track event.
var eot = []byte{0x00, 0xFF, 0x2F, 0x00}

package ingest

import (
	"encoding/binary"
	"fmt"
)

// unwrapRIFF returns the SMF inside a RIFF RMID file and its offset in data, or data
// itself at offset 0 when it does not start with "RIFF". The RIFF layout (Microsoft
// Multimedia Programming Interface and Data Specifications 1.0) is
//
//	"RIFF" <u32le size> "RMID" { <id> <u32le size> <data> [pad byte to even size] }
//
// and the SMF is the payload of the "data" chunk. Chunk sizes are checked against the
// bytes that remain; the RIFF size itself is ignored, as some writers get it wrong.
func unwrapRIFF(data []byte) ([]byte, int64, error) {
	if len(data) < 4 || binary.BigEndian.Uint32(data) != idRIFF {
		return data, 0, nil
	}
	if len(data) < 12 {
		return nil, int64(len(data)), fmt.Errorf("%w: RIFF header", ErrTruncated)
	}
	if binary.BigEndian.Uint32(data[8:]) != idRMID {
		return nil, 8, fmt.Errorf("%w: RIFF form %q, want \"RMID\"", ErrBadMagic, data[8:12])
	}
	limit := len(data)
	p := 12
	for {
		if limit-p < chunkHeaderLen {
			return nil, int64(p), fmt.Errorf("%w: RIFF RMID without a data chunk", ErrTruncated)
		}
		id := binary.BigEndian.Uint32(data[p:])
		n := binary.LittleEndian.Uint32(data[p+4:])
		if uint64(n) > uint64(limit-p-chunkHeaderLen) {
			return nil, int64(p + 4), fmt.Errorf("%w: RIFF chunk length %d, %d bytes remain", ErrChunkLength, n, limit-p-chunkHeaderLen)
		}
		body := p + chunkHeaderLen
		if id == idData {
			return data[body : body+int(n) : body+int(n)], int64(body), nil
		}
		p = body + int(n) + int(n&1)
	}
}

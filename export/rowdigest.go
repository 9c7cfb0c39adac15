package export

import (
	"encoding/binary"
	"encoding/hex"
	"math"
	"unsafe"

	"github.com/zeebo/xxh3"
)

// batchDigester computes the digest of a batch of rows as handed to a shard
// encoder: the rows' values and whether the batch ends its row group. Shard bytes
// follow from their batches alone, so a shard whose batches all have the digests
// that an earlier run of the same config recorded for it is that run's shard, and
// need not be encoded again to find out (see journalEntry.Batches).
//
// The digest is XXH3-128, not a cryptographic hash: it guards against accidental
// change (an input edited between an interrupted run and its rerun), and whoever
// could forge a collision could as well rewrite the shards. The token columns are
// hashed as they lie in memory, in the machine's byte order: a digest is compared
// only with one recorded in the same output folder, and on a machine of the other
// byte order no batch matches, so the shards are encoded again.
type batchDigester struct {
	h   *xxh3.Hasher
	buf []byte
}

func newBatchDigester() *batchDigester { return &batchDigester{h: xxh3.New()} }

// digest returns the hex digest of rows with the end-of-group flag.
func (d *batchDigester) digest(rows []Row, end bool) string {
	d.h.Reset()
	b := binary.AppendUvarint(d.buf[:0], uint64(len(rows)))
	b = append(b, boolByte(end))
	for i := range rows {
		r := &rows[i]
		for _, n := range [...]int{len(r.Tokens), len(r.Time), len(r.Pitch), len(r.Inst),
			len(r.Piece), len(r.Dataset), len(r.Source), len(r.ContentHash), len(r.Split)} {
			b = binary.AppendUvarint(b, uint64(n))
		}
		b = binary.LittleEndian.AppendUint32(b, uint32(r.Window))
		b = binary.LittleEndian.AppendUint32(b, uint32(r.Transpose))
		b = binary.LittleEndian.AppendUint32(b, math.Float32bits(r.Stretch))
		d.h.Write(b)
		b = b[:0]
		d.h.Write(rawBytes(r.Tokens))
		d.h.Write(rawBytes(r.Time))
		d.h.Write(rawBytes(r.Pitch))
		d.h.Write(rawBytes(r.Inst))
		for _, s := range [...]string{r.Piece, r.Dataset, r.Source, r.ContentHash, r.Split} {
			d.h.WriteString(s)
		}
	}
	d.h.Write(b)
	d.buf = b
	sum := d.h.Sum128().Bytes()
	return hex.EncodeToString(sum[:])
}

// rawBytes is the bytes of s as they lie in memory.
func rawBytes[T int16 | int32](s []T) []byte {
	if len(s) == 0 {
		return nil
	}
	return unsafe.Slice((*byte)(unsafe.Pointer(unsafe.SliceData(s))), len(s)*int(unsafe.Sizeof(s[0])))
}

func boolByte(b bool) byte {
	if b {
		return 1
	}
	return 0
}

package export

import (
	"fmt"
	"sync"

	"github.com/klauspost/compress/zstd"
	"github.com/parquet-go/parquet-go/format"
)

// zstdWindow is the Zstandard window of shard pages. Pages are cut at a few
// hundred kilobytes, so a 1 MiB window reaches every match inside a page (the
// output is the same as with the library's 8 MiB default for any page under
// 1 MiB), while each pooled encoder keeps 2 MiB of history instead of 16 MiB:
// with parquet-go's own codec the encoders' history was about half of a large
// export's heap (see the contributor guide's profile notes).
const zstdWindow = 1 << 20

// zstdCodec is parquet-go's Zstandard codec (same level and frame options) with
// the window capped at zstdWindow.
//
// Encoders are kept in a free list that outlives collections: a sync.Pool drops
// them at every collection, and each one rebuilt allocates its 3.5 MiB of
// history and tables again, which the heap then holds twice until the next
// collection. The list keeps as many as were ever busy at once, up to
// maxIdleEncoders.
type zstdCodec struct {
	level    zstd.EncoderLevel
	encoders chan *zstd.Encoder
	decoders sync.Pool
}

// maxIdleEncoders bounds the encoders kept between uses: more than the pages
// compressed at once by any worker count of a 2-core to 16-core machine would
// need is rare, and an encoder beyond it is simply dropped.
const maxIdleEncoders = 16

func newZstdCodec(level zstd.EncoderLevel) *zstdCodec {
	return &zstdCodec{level: level, encoders: make(chan *zstd.Encoder, maxIdleEncoders)}
}

// String implements compress.Codec.
func (c *zstdCodec) String() string { return "ZSTD" }

// CompressionCodec implements compress.Codec.
func (c *zstdCodec) CompressionCodec() format.CompressionCodec { return format.Zstd }

// Encode implements compress.Codec.
func (c *zstdCodec) Encode(dst, src []byte) ([]byte, error) {
	var e *zstd.Encoder
	select {
	case e = <-c.encoders:
	default:
		var err error
		e, err = zstd.NewWriter(nil,
			zstd.WithEncoderConcurrency(1),
			zstd.WithEncoderLevel(c.level),
			zstd.WithZeroFrames(true),
			zstd.WithEncoderCRC(false),
			zstd.WithWindowSize(zstdWindow),
		)
		if err != nil {
			return dst, fmt.Errorf("zstd encoder: %w", err)
		}
	}
	defer func() {
		select {
		case c.encoders <- e:
		default:
		}
	}()
	return e.EncodeAll(src, dst[:0]), nil
}

// Decode implements compress.Codec.
func (c *zstdCodec) Decode(dst, src []byte) ([]byte, error) {
	d, _ := c.decoders.Get().(*zstd.Decoder)
	if d == nil {
		var err error
		if d, err = zstd.NewReader(nil, zstd.WithDecoderConcurrency(1)); err != nil {
			return dst, fmt.Errorf("zstd decoder: %w", err)
		}
	}
	defer c.decoders.Put(d)
	return d.DecodeAll(src, dst[:0])
}

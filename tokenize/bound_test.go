package tokenize

import (
	"math"
	"runtime"
	"testing"
	"time"

	"github.com/relshard/relshard/ingest"
)

// The target of BenchmarkWindowsVsParse (encoding plus windowing under a quarter of
// the parse time) is judged against what any performance encoder must do per note.
// BenchmarkEncodeBound measures, in one run with ingest.Parse on the same files, two
// stripped encoders that do less than a correct one, so their ratios to parse time
// are below what a correct encoder can reach on this machine:
//
//   - ordered: the performance events in time order (pending note-offs in a sorted
//     queue, time-shifts, a set-velocity when the bin changes, note-on or hit), but
//     no merging of notes that share a key and onset, no retrigger, no key order
//     within an onset, no checks, no windows;
//   - unordered: the same tokens with each note-off written straight after its
//     note-on, which is not a valid stream: quantizing and writing tokens, no more.
//
// Both write more tokens than the encoder (no merges): token-ratio reports how many
// more, which makes them slower by about as much.

// boundEncoder is the stripped encoder of BenchmarkEncodeBound.
type boundEncoder struct {
	queue                             []uint64 // pending note-offs: step<<8 | key
	cur                               int64
	vel                               int
	shiftBase, velBase, onBase, offID int32
	ordered                           bool
}

func (b *boundEncoder) shift(d []Token, to int64) []Token {
	for gap := to - b.cur; gap > 0; gap = to - b.cur {
		n := min(gap, 100)
		b.cur += n
		ms := int32(b.cur * 10)
		d = put(d, b.shiftBase+int32(n)-1, ms, ms, -1, -1)
	}
	return d
}

func (b *boundEncoder) off(d []Token, k uint64) []Token {
	d = b.shift(d, int64(k>>8))
	ms := int32(b.cur * 10)
	return put(d, b.offID+int32(k&0x7f), ms, ms, int16(k&0x7f), -1)
}

func (b *boundEncoder) encode(p *ingest.Piece, d []Token) []Token {
	const scale = 100 // 10 ms steps
	q, h := b.queue[:0], 0
	b.cur, b.vel = 0, -1
	for i := range p.Notes {
		n := &p.Notes[i]
		on, off := int64(math.Round(n.Start*scale)), int64(math.Round(n.End*scale))
		for b.ordered && h < len(q) && int64(q[h]>>8) <= on {
			d = b.off(d, q[h])
			h++
		}
		d = b.shift(d, on)
		ms := int32(b.cur * 10)
		if v := int(n.Velocity >> 2); v != b.vel {
			d = put(d, b.velBase+int32(v), ms, ms, -1, -1)
			b.vel = v
		}
		d = put(d, b.onBase+int32(n.Pitch), ms, ms, int16(n.Pitch), int16(n.Program))
		if n.Drum {
			continue
		}
		k := uint64(off)<<8 | uint64(n.Pitch)
		if !b.ordered {
			ms := int32(off * 10)
			d = put(d, b.offID+int32(n.Pitch), ms, ms, int16(n.Pitch), int16(n.Program))
			continue
		}
		if h > 64 && 2*h > len(q) {
			q, h = q[:copy(q, q[h:])], 0
		}
		q = append(q, k)
		for j := len(q) - 1; j > h && q[j-1] > k; j-- {
			q[j], q[j-1] = q[j-1], q[j]
		}
	}
	for ; h < len(q); h++ {
		d = b.off(d, q[h])
	}
	b.queue = q
	return d
}

func BenchmarkEncodeBound(b *testing.B) {
	data, pieces := benchInput(b)
	if data == nil {
		b.Skip("no reference files to parse")
	}
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	e := mustEncoder(b, benchConfigs()[Performance])
	voc := e.vocab
	bound := func(ordered bool) *boundEncoder {
		return &boundEncoder{shiftBase: voc.shiftBase, velBase: voc.velBase, onBase: voc.onBase,
			offID: voc.offBase, ordered: ordered}
	}
	ordered, unordered := bound(true), bound(false)
	// Token counts, once: the stripped encoders' streams against the encoder's.
	var dst []Token
	var encoded, stripped int
	for i := range pieces {
		var err error
		if dst, _, err = e.Encode(&pieces[i], Identity, dst[:0]); err != nil {
			b.Fatal(err)
		}
		encoded += len(dst)
		dst = ordered.encode(&pieces[i], dst[:0])
		stripped += len(dst)
	}
	yield := func(Window) error { return nil }
	var parse, enc, ord, unord time.Duration
	for b.Loop() {
		for _, d := range data {
			c0 := threadCPU()
			ps, err := ingest.Parse("bench.mid", d, ingest.DefaultParseOptions())
			if err != nil {
				b.Fatal(err)
			}
			c1 := threadCPU()
			for i := range ps {
				if err := e.Windows(&ps[i], yield); err != nil {
					b.Fatal(err)
				}
			}
			c2 := threadCPU()
			for i := range ps {
				dst = ordered.encode(&ps[i], dst[:0])
			}
			c3 := threadCPU()
			for i := range ps {
				dst = unordered.encode(&ps[i], dst[:0])
			}
			c4 := threadCPU()
			parse, enc, ord, unord = parse+c1-c0, enc+c2-c1, ord+c3-c2, unord+c4-c3
		}
	}
	b.ReportMetric(float64(stripped)/float64(encoded), "token-ratio")
	if parse > 0 {
		b.ReportMetric(float64(enc)/float64(parse), "windows-ratio")
		b.ReportMetric(float64(ord)/float64(parse), "ordered-ratio")
		b.ReportMetric(float64(unord)/float64(parse), "unordered-ratio")
	}
}

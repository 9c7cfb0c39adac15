package ingest

import (
	"os"
	"runtime"
	"testing"
	"time"
)

// BenchmarkIngestBound puts the target "ingest within 3× of reading the bytes" next
// to what a stripped ingest costs, one file at a time on one thread, over Debian's
// openttd-openmsx files (see openttdDir):
//
//   - read: os.ReadFile, the baseline;
//   - sha: the SHA-256 of the bytes, which every file record carries;
//   - walk: the allocation-free event walk (Reader, with the batched channel
//     messages Parse reads), no more;
//   - stripped: the walk with note-on/note-off pairing into a reused buffer,
//     nothing else: no pedal, programs, warnings, tempo map, seconds, ordering
//     across tracks or content hashes;
//   - ingest: what Scan does with the bytes (SHA-256, then Parse with the content
//     hashes while writing the notes).
//
// Ratios are of the summed thread CPU times of each step to read's. floor/read is
// read+sha+walk and stripped/read read+sha+stripped: less than any ingest that
// reads, hashes and pairs every file can cost against the baseline. ingest/read is
// read+ingest; Scan adds the folder walk, result order and duplicate index.
func BenchmarkIngestBound(b *testing.B) {
	paths := openttdPaths()
	files := loadBenchCorpus(b)
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	h := newPieceHasher()
	opts := DefaultParseOptions()
	var r Reader
	var batch [256]chanMsg
	var open [numChannels * numKeys]int32
	var notes []rawNote
	var read, sha, walk, pair, full time.Duration
	for b.Loop() {
		for i, p := range paths {
			c0 := threadCPU()
			if _, err := os.ReadFile(p); err != nil {
				b.Fatal(err)
			}
			c1 := threadCPU()
			data := files[i]
			fileSHA256(data)
			c2 := threadCPU()
			if err := r.Reset(p, data, 0); err != nil {
				b.Fatal(err)
			}
			for r.NextTrack() {
				for {
					if msgs := r.channelRun(batch[:0]); len(msgs) == len(batch) {
						continue
					}
					if !r.Next() {
						break
					}
				}
			}
			c3 := threadCPU()
			if err := r.Reset(p, data, 0); err != nil {
				b.Fatal(err)
			}
			notes = notes[:0]
			for r.NextTrack() {
				clear(open[:])
				for {
					msgs := r.channelRun(batch[:0])
					notes = pairStripped(notes, &open, msgs)
					if len(msgs) == len(batch) {
						continue
					}
					if !r.Next() {
						break
					}
					if ev := r.Event(); ev.Kind == KindChannel {
						one := [1]chanMsg{{tick: ev.Tick, status: ev.Status, d1: ev.Data1, d2: ev.Data2}}
						notes = pairStripped(notes, &open, one[:])
					}
				}
			}
			if err := r.Err(); err != nil {
				b.Fatal(err)
			}
			c4 := threadCPU()
			fileSHA256(data)
			pieces, _, err := parseHashed(p, data, opts, h)
			if err != nil {
				b.Fatal(err)
			}
			releasePieces(pieces)
			c5 := threadCPU()
			read, sha, walk = read+c1-c0, sha+c2-c1, walk+c3-c2
			pair, full = pair+c4-c3, full+c5-c4
		}
	}
	if read > 0 {
		per := func(d time.Duration) float64 { return float64(d) / float64(read) }
		b.ReportMetric(per(sha), "sha/read")
		b.ReportMetric(per(walk), "walk/read")
		b.ReportMetric(per(read+sha+walk), "floor/read")
		b.ReportMetric(per(read+sha+pair), "stripped/read")
		b.ReportMetric(per(read+full), "ingest/read")
	}
}

// pairStripped is the pairing of BenchmarkIngestBound's stripped ingest: note-on and
// note-off (or note-on at velocity 0) per channel and key, nothing else.
func pairStripped(notes []rawNote, open *[numChannels * numKeys]int32, msgs []chanMsg) []rawNote {
	for i := range msgs {
		m := &msgs[i]
		ch := m.status & statusChannelMask
		k := int(ch)<<7 | int(m.d1&0x7F)
		switch t := m.status & statusTypeMask; {
		case t == statusNoteOn && m.d2 != 0:
			notes = append(notes, rawNote{StartTick: m.tick, Pitch: m.d1, Velocity: m.d2, Channel: ch})
			open[k] = int32(len(notes))
		case t == statusNoteOn || t == statusNoteOff:
			if j := open[k]; j != noKey {
				notes[j-1].EndTick = m.tick
				open[k] = noKey
			}
		}
	}
	return notes
}

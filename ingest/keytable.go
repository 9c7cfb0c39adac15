package ingest

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"math/bits"
	"os"
	"slices"
)

// keyTable maps 16-byte keys to 64-bit values for the whole of a scan: the duplicate
// indexes (content hash to the first file that has it) and the record names. Its
// keys are prefixes of SHA-256 sums, so they are spread evenly and their bytes serve
// as hashes.
//
// A corpus of a million files would hold about 150 MB of such entries in Go maps,
// so a table keeps at most spillAt entries in a map. When the map is full its
// entries go, sorted, to a run in an unlinked temporary file, and the map starts
// again. Runs are merged like the digits of a binary counter (two runs of one level
// make one of the next), so there are about log2(entries/spillAt) of them. Each run
// keeps in memory a Bloom filter of its keys (10 bits a key, 7 probes: about 1 %
// false positives) and the first key of every block of runBlock entries, about
// 1.4 bytes a key in all; a lookup asks the runs newest first, and reads one block
// of a run only when its filter admits the key. Most lookups of a scan are misses
// (new files), which the filters answer without reading the disk; the operating
// system's page cache holds the runs, not the process.
//
// When no temporary file can be made or written, the entries stay in memory and
// nothing is lost. A read error of a run is kept in err and ends the scan, because
// duplicates could no longer be found reliably.
type keyTable struct {
	// spillAt is the number of entries in mem that makes a run; after a failed
	// spill, never.
	spillAt int
	mem     map[dupKey]uint64
	runs    []*keyRun // oldest first; levels strictly decrease
	blk     []byte    // one block of a run, for lookups
	err     error
}

// keyRun is one sorted run of entries in its own temporary file.
type keyRun struct {
	f     *os.File
	n     int      // entries
	level int      // a run of level l holds up to spillAt*2^l entries
	fence []dupKey // the first key of each block of runBlock entries
	bloom []uint64 // bloomBits bits a key
}

// spillKeys is the default keyTable.spillAt: 4,096 entries take about 200 KB in a map.
const spillKeys = 4096

// An entry of a run is the key, then the value, little endian. Lookups read one
// block of runBlock entries.
const (
	entryLen     = keyLen + 8
	runBlock     = 128
	bloomBits    = 10
	bloomProbes  = 7
	mergeBufSize = 64 << 10
)

// newKeyTable makes an empty table that spills at spillKeys entries (tests change
// tableSpillAt to put every table of a scan on disk).
func newKeyTable() *keyTable {
	return &keyTable{spillAt: tableSpillAt, mem: map[dupKey]uint64{}}
}

var tableSpillAt = spillKeys

// get returns the value of k and whether k is in the table.
func (t *keyTable) get(k dupKey) (uint64, bool) {
	if v, ok := t.mem[k]; ok {
		return v, true
	}
	if t.err != nil {
		return 0, false
	}
	for i := len(t.runs) - 1; i >= 0; i-- {
		v, ok, err := t.runs[i].get(k, &t.blk)
		if err != nil {
			t.fail(err)
			return 0, false
		}
		if ok {
			return v, true
		}
	}
	return 0, false
}

// set stores v under k, replacing any value k had.
func (t *keyTable) set(k dupKey, v uint64) {
	if _, ok := t.mem[k]; !ok && len(t.mem) >= t.spillAt {
		t.spill()
	}
	t.mem[k] = v
}

func (t *keyTable) fail(err error) {
	if t.err == nil {
		t.err = fmt.Errorf("duplicate index file: %w", err)
	}
}

// spill writes the entries of mem as a new run and merges runs of equal level; on a
// failure to make or write a file the entries stay in memory from then on.
func (t *keyTable) spill() {
	keys := make([]dupKey, 0, len(t.mem))
	for k := range t.mem {
		keys = append(keys, k)
	}
	slices.SortFunc(keys, compareDupKeys)
	r, err := writeRun(len(keys), func(yield func(dupKey, uint64) error) error {
		for _, k := range keys {
			if err := yield(k, t.mem[k]); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		t.spillAt = math.MaxInt
		return
	}
	clear(t.mem)
	t.runs = append(t.runs, r)
	for n := len(t.runs); n >= 2 && t.runs[n-2].level == t.runs[n-1].level; n = len(t.runs) {
		m, err := mergeKeyRuns(t.runs[n-2], t.runs[n-1])
		if err != nil {
			// both runs stay as they are: lookups still find everything
			t.spillAt = math.MaxInt
			return
		}
		t.runs[n-2].close()
		t.runs[n-1].close()
		t.runs = append(t.runs[:n-2], m)
	}
}

// writeRun makes a run in a new temporary file from n entries that each yields in
// key order.
func writeRun(n int, each func(yield func(dupKey, uint64) error) error) (*keyRun, error) {
	f, err := newScratchFile("relshard-keys-*")
	if err != nil {
		return nil, err
	}
	r := &keyRun{f: f, fence: make([]dupKey, 0, (n+runBlock-1)/runBlock),
		bloom: make([]uint64, (n*bloomBits+63)/64+1)}
	w := bufio.NewWriterSize(f, min(mergeBufSize, n*entryLen+16))
	var e [entryLen]byte
	err = each(func(k dupKey, v uint64) error {
		if r.n%runBlock == 0 {
			r.fence = append(r.fence, k)
		}
		r.addBloom(k)
		copy(e[:], k[:])
		binary.LittleEndian.PutUint64(e[keyLen:], v)
		r.n++
		_, err := w.Write(e[:])
		return err
	})
	if err == nil {
		err = w.Flush()
	}
	if err != nil {
		f.Close()
		return nil, err
	}
	return r, nil
}

// mergeKeyRuns merges run a and the newer run b into a run of the next level; b's
// value wins for a key in both.
func mergeKeyRuns(a, b *keyRun) (*keyRun, error) {
	ra := bufio.NewReaderSize(io.NewSectionReader(a.f, 0, int64(a.n)*entryLen), min(mergeBufSize, (a.n+1)*entryLen))
	rb := bufio.NewReaderSize(io.NewSectionReader(b.f, 0, int64(b.n)*entryLen), min(mergeBufSize, (b.n+1)*entryLen))
	r, err := writeRun(a.n+b.n, func(yield func(dupKey, uint64) error) error {
		ka, va, okA, err := readEntry(ra)
		if err != nil {
			return err
		}
		kb, vb, okB, err := readEntry(rb)
		if err != nil {
			return err
		}
		for okA || okB {
			c := 1
			switch {
			case !okA:
			case !okB:
				c = -1
			default:
				c = compareDupKeys(ka, kb)
			}
			if c < 0 {
				err = yield(ka, va)
			} else {
				err = yield(kb, vb)
			}
			if err != nil {
				return err
			}
			if c <= 0 {
				if ka, va, okA, err = readEntry(ra); err != nil {
					return err
				}
			}
			if c >= 0 {
				if kb, vb, okB, err = readEntry(rb); err != nil {
					return err
				}
			}
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	r.level = a.level + 1
	return r, nil
}

// readEntry reads the next entry of a run; ok is false at its end. The entry is
// read in place in the reader's buffer, which holds at least one entry.
func readEntry(r *bufio.Reader) (k dupKey, v uint64, ok bool, err error) {
	e, err := r.Peek(entryLen)
	if err != nil {
		if err == io.EOF && len(e) == 0 {
			return k, 0, false, nil
		}
		if err == io.EOF {
			err = io.ErrUnexpectedEOF
		}
		return k, 0, false, err
	}
	k, v = dupKey(e[:keyLen]), binary.LittleEndian.Uint64(e[keyLen:])
	r.Discard(entryLen)
	return k, v, true, nil
}

// get looks k up in the run, reading one block into *blk when the filter admits it.
func (r *keyRun) get(k dupKey, blk *[]byte) (uint64, bool, error) {
	if !r.mayHave(k) {
		return 0, false, nil
	}
	// the last block whose first key is at most k
	b, _ := slices.BinarySearchFunc(r.fence, k, compareDupKeys)
	if b == len(r.fence) || r.fence[b] != k {
		b--
	}
	if b < 0 {
		return 0, false, nil
	}
	n := min(runBlock, r.n-b*runBlock)
	if cap(*blk) < runBlock*entryLen {
		*blk = make([]byte, runBlock*entryLen)
	}
	buf := (*blk)[:n*entryLen]
	if _, err := r.f.ReadAt(buf, int64(b)*runBlock*entryLen); err != nil {
		return 0, false, err
	}
	lo, hi := 0, n
	for lo < hi {
		m := int(uint(lo+hi) >> 1)
		e := buf[m*entryLen : (m+1)*entryLen]
		switch c := compareDupKeys(dupKey(e[:keyLen]), k); {
		case c == 0:
			return binary.LittleEndian.Uint64(e[keyLen:]), true, nil
		case c < 0:
			lo = m + 1
		default:
			hi = m
		}
	}
	return 0, false, nil
}

// bloomHashes are the two hashes of k that the filter's probes combine (Kirsch and
// Mitzenmacher 2006, "Less hashing, same performance"): bytes of a SHA-256 sum, so
// independent of the block search, which orders by the first bytes.
func bloomHashes(k dupKey) (h1, h2 uint64) {
	return binary.LittleEndian.Uint64(k[8:16]), binary.LittleEndian.Uint64(k[0:8]) | 1
}

// bloomBit maps the i-th probe of a key to one of n bits: the high word of the
// product spreads a 64-bit hash over [0, n) without a division (Lemire 2019, "Fast
// random integer generation in an interval").
func bloomBit(h1, h2, i, n uint64) uint64 {
	hi, _ := bits.Mul64(h1+i*h2, n)
	return hi
}

func (r *keyRun) addBloom(k dupKey) {
	n := uint64(len(r.bloom) * 64)
	h1, h2 := bloomHashes(k)
	for i := range uint64(bloomProbes) {
		b := bloomBit(h1, h2, i, n)
		r.bloom[b/64] |= 1 << (b % 64)
	}
}

func (r *keyRun) mayHave(k dupKey) bool {
	n := uint64(len(r.bloom) * 64)
	h1, h2 := bloomHashes(k)
	for i := range uint64(bloomProbes) {
		b := bloomBit(h1, h2, i, n)
		if r.bloom[b/64]&(1<<(b%64)) == 0 {
			return false
		}
	}
	return true
}

func (r *keyRun) close() { r.f.Close() }

// close releases the temporary files.
func (t *keyTable) close() {
	for _, r := range t.runs {
		r.close()
	}
	t.runs = nil
}

// compareDupKeys orders keys as their bytes.
func compareDupKeys(a, b dupKey) int { return bytes.Compare(a[:], b[:]) }

// newScratchFile creates an unlinked temporary file. A system that cannot unlink
// an open file gets an error rather than a file that a crash would leave behind.
func newScratchFile(pattern string) (*os.File, error) {
	f, err := os.CreateTemp("", pattern)
	if err != nil {
		return nil, err
	}
	if err := os.Remove(f.Name()); err != nil {
		f.Close()
		os.Remove(f.Name())
		return nil, err
	}
	return f, nil
}

package ingest

import (
	"slices"
	"sync"
)

// Note buffers are recycled: a corpus's notes are most of what a scan allocates
// (48 bytes a note, hundreds of megabytes for ten thousand files), and without reuse
// the collector runs every few megabytes. Parse takes each piece's notes from a pool
// of size classes, and Result.Release gives them back once a consumer is done with
// them. A buffer never released is collected as usual, so releasing is optional.
//
// Classes are 2^k and 3*2^(k-1) notes, from 64 to maxPooledNotes, so a buffer wastes
// at most a third of itself; bigger pieces get buffers of their exact size that are
// never pooled, so a rare huge file cannot pin its memory for the rest of a run.

// maxPooledNotes is the largest buffer kept for reuse (768 KiB of notes).
const maxPooledNotes = 1 << 14

// noteClassSizes are the buffer sizes of the pool's classes, ascending.
var noteClassSizes = func() []int {
	var s []int
	for n := 64; n <= maxPooledNotes; n *= 2 {
		s = append(s, n)
		if m := n + n/2; m < maxPooledNotes {
			s = append(s, m)
		}
	}
	return s
}()

// notePools holds one pool per class, of *[]Note with the class's capacity at least.
var notePools = make([]sync.Pool, len(noteClassSizes))

// getNotes returns a slice of n notes whose contents are arbitrary: the caller
// stores every field of every note.
func getNotes(n int) []Note {
	c, _ := slices.BinarySearch(noteClassSizes, n)
	if c == len(noteClassSizes) {
		return make([]Note, n)
	}
	if b, ok := notePools[c].Get().(*[]Note); ok {
		return (*b)[:n]
	}
	return make([]Note, n, noteClassSizes[c])
}

// putNotes offers s's storage for reuse: s is filed under the largest class it can
// serve whole. The caller must hold no other reference to it.
func putNotes(s []Note) {
	c, found := slices.BinarySearch(noteClassSizes, cap(s))
	if !found {
		c-- // the class below: every request it serves fits
	}
	if c < 0 || cap(s) > maxPooledNotes {
		return
	}
	s = s[:0]
	notePools[c].Put(&s)
}

// Release gives the note buffers of r's pieces back to the scan for reuse and sets
// their Notes to nil. Call it when nothing refers to those notes any more (the
// pieces' other fields stay valid); it is optional, but a consumer that releases
// every result lets a scan run with a fraction of the garbage collection.
func (r *Result) Release() {
	releasePieces(r.Pieces)
}

// releasePieces gives back the note buffers of pieces and clears their Notes.
func releasePieces(pieces []Piece) {
	for i := range pieces {
		if n := pieces[i].Notes; n != nil {
			putNotes(n)
			pieces[i].Notes = nil
		}
	}
}

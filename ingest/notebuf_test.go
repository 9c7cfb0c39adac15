package ingest

import (
	"context"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"testing"
)

func TestNoteClasses(t *testing.T) {
	tests := []struct {
		n, wantCap int
	}{
		{0, 64}, {1, 64}, {64, 64}, {65, 96}, {96, 96}, {97, 128}, {129, 192},
		{193, 256}, {40000, 49152}, {maxPooledNotes, maxPooledNotes},
		{maxPooledNotes + 1, maxPooledNotes + 1}, // exact, never pooled
	}
	for _, tt := range tests {
		s := getNotes(tt.n)
		if len(s) != tt.n || cap(s) < tt.n {
			t.Errorf("getNotes(%d): len %d cap %d", tt.n, len(s), cap(s))
		}
		if tt.n <= maxPooledNotes && cap(s) > tt.wantCap {
			t.Errorf("getNotes(%d): cap %d, want at most %d", tt.n, cap(s), tt.wantCap)
		}
	}
	// A buffer between classes serves the class below it whole.
	putNotes(make([]Note, 0, 100))
	for range 8 {
		if s := getNotes(96); cap(s) < 96 {
			t.Fatalf("getNotes(96) after putNotes(cap 100): cap %d", cap(s))
		}
	}
	putNotes(make([]Note, 0, 10))               // below the smallest class: dropped
	putNotes(make([]Note, 0, 4*maxPooledNotes)) // too big to keep: dropped
}

// poisonPool fills the pools with buffers whose notes hold nonsense, so that a field
// Parse forgot to store would show.
func poisonPool() {
	bad := Note{StartTick: -7, EndTick: -9, Start: -1, End: -2, Pitch: 200, Velocity: 200,
		Channel: 99, Program: 250, Drum: true, Track: -3}
	for _, size := range noteClassSizes {
		for range 4 {
			s := make([]Note, size)
			for i := range s {
				s[i] = bad
			}
			putNotes(s)
		}
	}
}

// reuseInputs are the fixtures and the openttd-openmsx files (named openttd-*), by name.
func reuseInputs(t *testing.T) map[string][]byte {
	inputs := fixtures()
	for _, p := range openttdPaths() {
		data, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		inputs["openttd-"+filepath.Base(p)] = data
	}
	return inputs
}

// TestReusedNoteBuffers checks that Parse gives the same pieces in recycled buffers
// as in fresh ones, on the fixtures and the openttd-openmsx files.
func TestReusedNoteBuffers(t *testing.T) {
	opts := DefaultParseOptions()
	for name, data := range reuseInputs(t) {
		fresh, ferr := Parse(name, data, opts)
		// copy out of the pool's buffers before poisoning them
		for i := range fresh {
			fresh[i].Notes = slices.Clone(fresh[i].Notes)
		}
		poisonPool()
		again, aerr := Parse(name, data, opts)
		if (ferr == nil) != (aerr == nil) {
			t.Fatalf("%s: errors %v, then %v", name, ferr, aerr)
		}
		for i := range again {
			if !reflect.DeepEqual(fresh[i].Notes, again[i].Notes) && len(fresh[i].Notes)+len(again[i].Notes) > 0 {
				t.Errorf("%s piece %d: notes differ in a reused buffer", name, i)
			}
		}
		releasePieces(again)
	}
}

// TestReleaseDuringScan releases every result as it comes, as the scan command
// does, and checks that the records are those of a scan that releases nothing.
func TestReleaseDuringScan(t *testing.T) {
	dir := t.TempDir()
	fxWrite(t, dir, reuseInputs(t))
	scan := func(release bool) (recs []FileRecord, notes [][]Note) {
		err := Scan(context.Background(), []Source{{Path: dir}}, DefaultOptions(), func(r *Result) error {
			recs = append(recs, r.Record)
			for _, p := range r.Pieces {
				notes = append(notes, slices.Clone(p.Notes))
			}
			if release {
				r.Release()
				for _, p := range r.Pieces {
					if p.Notes != nil {
						t.Errorf("%s: Notes kept after Release", r.Record.Path)
					}
				}
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
		return recs, notes
	}
	wantRecs, wantNotes := scan(false)
	for range 3 {
		poisonPool()
		gotRecs, gotNotes := scan(true)
		if !reflect.DeepEqual(gotRecs, wantRecs) {
			t.Fatal("records differ when results are released")
		}
		if !reflect.DeepEqual(gotNotes, wantNotes) {
			t.Fatal("notes differ when results are released")
		}
	}
}

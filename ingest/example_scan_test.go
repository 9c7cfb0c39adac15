package ingest_test

import (
	"context"
	"fmt"

	"github.com/relshard/relshard/ingest"
)

// Scan a folder: every MIDI file (and every entry of the zip inside) gets one record,
// in path order; the later of two copies is the duplicate.
func ExampleScan() {
	s := ingest.NewSummary()
	err := ingest.Scan(context.Background(), []ingest.Source{{Path: "testdata/sources/demo"}}, ingest.DefaultOptions(),
		func(r *ingest.Result) error {
			s.Add(r)
			rec := r.Record
			switch rec.Status {
			case ingest.StatusOK:
				fmt.Printf("%-22s ok, %d notes\n", rec.Path, rec.Notes)
			case ingest.StatusDuplicate:
				fmt.Printf("%-22s %s duplicate of %s\n", rec.Path, rec.DuplicateKind, rec.DuplicateOf)
			default:
				fmt.Printf("%-22s skipped: %s\n", rec.Path, ingest.ReasonClass(r.Err))
			}
			return nil
		})
	if err != nil {
		fmt.Println(err)
	}
	fmt.Printf("%d files, %d ok, %d notes\n", s.Total.Files, s.Total.OK, s.Total.Notes)
	// Output:
	// a.mid                  ok, 8 notes
	// b.mid.gz               ok, 3 notes
	// broken.mid             skipped: chunk length past end of data
	// copy.MID               exact duplicate of demo/a.mid
	// songs.zip/drums.mid    ok, 3 notes
	// songs.zip/notes.txt    skipped: not MIDI
	// songs.zip/up.mid       transposed duplicate of demo/a.mid
	// 7 files, 3 ok, 14 notes
}

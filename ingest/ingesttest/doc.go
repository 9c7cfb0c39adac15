// Package ingesttest builds the inputs of tests of code that reads MIDI corpora:
// Standard MIDI Files written with gomidi's writer (an implementation of SMF 1.0
// independent of package ingest), gzip, zip and tar data from the standard library's
// writers, and folders of such files.
//
//	tune := ingesttest.SMF(t, 96, false, []ingesttest.Note{{Start: 0, Dur: 96, Key: 60, Vel: 90}})
//	set := ingesttest.Zip(t, ingesttest.ZipEntry{Name: "tune.mid", Data: tune})
//	ingesttest.WriteFiles(t, dir, map[string][]byte{"a.mid": tune, "sub/set.zip": set})
//
// Every builder takes the test's testing.TB and fails it on any error, so a test
// reads as the corpus it describes. The package does not import package ingest: the
// fixtures stay an outside view of the format, and ingest's own tests can use them.
package ingesttest

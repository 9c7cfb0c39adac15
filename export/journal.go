package export

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"sync"
)

// JournalName is the file in which a run lists each shard as it completes, so
// that a rerun after a crash keeps the shards already written instead of writing
// and syncing them again. It exists only while a run is unfinished.
const JournalName = ".relshard-journal.jsonl"

// journalEntry is one line of the journal: a shard, the digest of its bytes (the
// hex SHA-256 of the file, which follows from its rows and writer options) and the
// batches its rows were encoded in, in order.
type journalEntry struct {
	Digest  string         `json:"digest"`
	Shard   Shard          `json:"shard"`
	Writer  string         `json:"writer,omitempty"` // ShardOptions.identity of the build and options that wrote it
	Batches []journalBatch `json:"batches,omitempty"`
}

// journalBatch is one batch of rows handed to a shard's encoder: its row count,
// whether it ended a row group, and its digest (batchDigester). A rerun whose
// batches for a shard have the same digests, in the same order, would encode the
// same file, so it keeps the file on disk without encoding; where they part, it
// reads the batches before back from the file to encode them again (see
// datasetWriter.encode).
type journalBatch struct {
	Rows   int    `json:"rows"`
	End    bool   `json:"end,omitempty"`
	Digest string `json:"digest"`
}

// journal records completed shards and answers whether a shard of an earlier,
// interrupted run of the same config can be kept.
type journal struct {
	mu   sync.Mutex
	dir  string
	f    *os.File
	prev map[string]journalEntry // by path, from the interrupted run
}

// openJournal starts the journal of a run. With resume, the entries of the
// interrupted run are loaded (up to the first torn line) and kept; otherwise any
// old journal is discarded.
func openJournal(dir string, resume bool) (*journal, error) {
	j := &journal{dir: dir, prev: map[string]journalEntry{}}
	path := filepath.Join(dir, JournalName)
	var keep []byte
	if resume {
		data, err := os.ReadFile(path)
		if err != nil && !errors.Is(err, fs.ErrNotExist) {
			return nil, fmt.Errorf("read journal: %w", err)
		}
		for len(data) > 0 {
			line, rest, ok := bytes.Cut(data, []byte("\n"))
			if !ok {
				break // torn last line of a killed run
			}
			var e journalEntry
			if json.Unmarshal(line, &e) != nil || e.Digest == "" {
				break
			}
			j.prev[e.Shard.Path] = e
			keep = append(append(keep, line...), '\n')
			data = rest
		}
	}
	// Start from the sound entries only, so nothing is appended after a torn line.
	if err := writeFileAtomic(path, keep); err != nil {
		return nil, fmt.Errorf("write journal: %w", err)
	}
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_APPEND, 0o644)
	if err != nil {
		return nil, fmt.Errorf("open journal: %w", err)
	}
	j.f = f
	return j, nil
}

// reuse reports whether the shard at rel, whose encoding came out with the given
// size and hex SHA-256, was completed by the interrupted run and is still intact
// on disk; it then returns its entry. Shard bytes follow from the rows and the
// writer options alone, so equal bytes mean the same shard.
func (j *journal) reuse(rel, sum string, size int64) (Shard, bool) {
	j.mu.Lock()
	e, ok := j.prev[rel]
	j.mu.Unlock()
	if !ok || e.Shard.SHA256 != sum || e.Shard.Bytes != size {
		return Shard{}, false
	}
	p, err := localPath(j.dir, rel)
	if err != nil {
		return Shard{}, false
	}
	n, onDisk, err := fileSHA256(p)
	if err != nil || n != size || onDisk != sum {
		return Shard{}, false
	}
	return e.Shard, true
}

// candidate returns the entry of the shard at rel when the interrupted run
// completed it with its batches recorded, with a writer of the same identity
// (ShardOptions.identity), and the file on disk is still intact, so that the
// shard's batches of this run can be compared with the entry's instead of being
// encoded.
func (j *journal) candidate(rel, writer string) (journalEntry, bool) {
	if j == nil {
		return journalEntry{}, false
	}
	j.mu.Lock()
	e, ok := j.prev[rel]
	j.mu.Unlock()
	if !ok || len(e.Batches) == 0 || e.Writer != writer {
		return journalEntry{}, false
	}
	rows := int64(0)
	for _, b := range e.Batches {
		if b.Rows <= 0 || b.Digest == "" {
			return journalEntry{}, false
		}
		rows += int64(b.Rows)
	}
	if rows != e.Shard.Rows {
		return journalEntry{}, false
	}
	if _, ok := j.reuse(rel, e.Shard.SHA256, e.Shard.Bytes); !ok {
		return journalEntry{}, false
	}
	return e, true
}

// record appends a completed shard, durably: the shard file was synced and
// renamed before, so an entry never names a file that is not complete.
func (j *journal) record(digest string, sh Shard, writer string, batches []journalBatch) error {
	line, err := json.Marshal(journalEntry{Digest: digest, Shard: sh, Writer: writer, Batches: batches})
	if err != nil {
		return err
	}
	j.mu.Lock()
	defer j.mu.Unlock()
	if _, err := j.f.Write(append(line, '\n')); err != nil {
		return fmt.Errorf("write journal: %w", err)
	}
	return j.f.Sync()
}

func (j *journal) close() error {
	if j == nil || j.f == nil {
		return nil
	}
	return j.f.Close()
}

// removeJournal deletes the journal of a finished run.
func removeJournal(dir string) error {
	if err := os.Remove(filepath.Join(dir, JournalName)); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return fmt.Errorf("remove journal: %w", err)
	}
	return nil
}

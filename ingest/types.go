package ingest

import (
	"errors"
	"fmt"
)

// Note is one sounding note after note-on/note-off pairing.
type Note struct {
	StartTick int64   // absolute tick of the note-on
	EndTick   int64   // absolute tick of the note end (after pedal extension when enabled)
	Start     float64 // seconds from the start of the piece, through the tempo map
	End       float64 // seconds
	Pitch     uint8   // MIDI key 0-127
	Velocity  uint8   // note-on velocity 1-127
	Channel   uint8   // 0-15; channel index 9 is General MIDI 1 drums
	Program   uint8   // General MIDI program 0-127 in effect on the channel at the note-on
	Drum      bool    // channel index 9
	Track     int     // track index in the file
}

// Tempo is one Set Tempo event.
type Tempo struct {
	Tick         int64
	USPerQuarter uint32
}

// Meter is one Time Signature event: Num/(2^DenPow).
type Meter struct {
	Tick  int64
	Num   uint8
	Denom uint8 // the denominator itself (4 for x/4), not its power of two
}

// Key is one Key Signature event.
type Key struct {
	Tick   int64
	Sharps int8 // -7..7, negative for flats
	Minor  bool
}

// Piece is one independent piece of music: a whole format-0 or format-1 file, or one
// track of a format-2 file (each track of format 2 is an independent pattern).
type Piece struct {
	Index  int // 0 for format 0/1; the track index for format 2
	Format int
	// TicksPerQuarter is the division in ticks per quarter note. For SMPTE division it
	// is the equivalent at the default 120 BPM, round(fps × ticks per frame / 2), so that
	// beat-based consumers see a steady 120 BPM; seconds come from SMPTEFPS and
	// TicksPerFrame (use Seconds or TimeMap, which know both cases).
	TicksPerQuarter int
	SMPTEFPS        float64 // 0 unless the division is SMPTE: frames per second (29.97 for the drop-frame code 29)
	TicksPerFrame   int     // SMPTE division only
	// Tempos are the Set Tempo events, sorted by tick (stable: file order on ties, the
	// last one rules); empty means the SMF 1.0 default of 500,000 µs per quarter. Always
	// empty for SMPTE division, where tempo events do not change time (SMF 1.0).
	Tempos []Tempo
	Meters []Meter // Time Signature events sorted by tick (stable); empty means 4/4 (see MeterAt)
	Keys   []Key   // Key Signature events sorted by tick (stable; see KeyAt)
	// TrackNames holds the first Sequence/Track Name of each track, indexed by track
	// ("" when none); for format 2, the one name of the piece's track.
	TrackNames []string
	Notes      []Note // sorted by (StartTick, Track, Channel, Pitch), then EndTick and Velocity
	EndTick    int64  // tick of the last event (End of Track) of the piece's longest track
	Warnings   Warnings

	// Hashes, filled by Scan (hex SHA-256 prefixes): MusicalHash is the hash of the notes
	// in beat time (independent of file layout, PPQ and track split); TransposedHash is
	// also invariant under transposition and is the piece's content hash for splits.
	MusicalHash    string
	TransposedHash string
}

// Warnings counts the recoverable oddities met while reading a file, by kind.
type Warnings map[string]int

// Add counts n occurrences of the warning kind.
func (w Warnings) Add(kind string, n int) {
	if n != 0 {
		w[kind] += n
	}
}

// Warning kinds.
const (
	WarnRetrigger  = "retriggered note"    // note-on of an already sounding pitch ended the earlier note
	WarnOpenAtEnd  = "note open at end"    // note closed at end of track
	WarnZeroLength = "zero-length note"    // kept
	WarnOrphanOff  = "note-off without on" // ignored
	WarnTrailing   = "bytes after last track"
	WarnMissingEOT = "missing end of track"

	WarnBadMeta          = "malformed tempo, meter or key event" // ignored
	WarnRunningAfterMeta = "running status after meta or SysEx"  // accepted, though SMF 1.0 says those cancel it
	WarnAfterEOT         = "bytes after end of track"            // skipped
	WarnUnknownChunk     = "unknown chunk"                       // skipped, as SMF 1.0 asks
)

// Status of one input file.
type Status string

// Statuses of an input file. Every input file gets exactly one.
const (
	StatusOK        Status = "ok"
	StatusSkipped   Status = "skipped"
	StatusDuplicate Status = "duplicate"
)

// DuplicateKind names which hash matched.
type DuplicateKind string

// Duplicate kinds, from the finest to the coarsest hash.
const (
	DupExact      DuplicateKind = "exact"      // same bytes
	DupMusical    DuplicateKind = "musical"    // same notes in beat time
	DupTransposed DuplicateKind = "transposed" // same notes shifted in pitch
)

// Sentinel errors wrapped by ParseError; test with errors.Is.
var (
	ErrTruncated         = errors.New("truncated")
	ErrEmpty             = errors.New("empty file")
	ErrBadMagic          = errors.New("not a Standard MIDI File (bad magic)")
	ErrChunkLength       = errors.New("chunk length past end of data")
	ErrBadVLQ            = errors.New("invalid variable-length quantity")
	ErrRunningStatus     = errors.New("data byte with no running status")
	ErrUnterminatedSysEx = errors.New("unterminated SysEx")
	ErrNoTracks          = errors.New("zero tracks")
	ErrZeroDivision      = errors.New("zero division")
	ErrTooLarge          = errors.New("file over the size limit")
	ErrBadHeader         = errors.New("bad header")
	ErrTooManyEvents     = errors.New("too many events")
	ErrNotGzip           = errors.New("not gzip data")
)

// ParseError reports where in a file a parse failed. Track is -1 and Offset -1 when unknown.
type ParseError struct {
	File   string
	Track  int
	Offset int64
	Err    error
}

func (e *ParseError) Error() string {
	s := e.File
	if s == "" {
		s = "<input>"
	}
	if e.Track >= 0 {
		s += fmt.Sprintf(": track %d", e.Track)
	}
	if e.Offset >= 0 {
		s += fmt.Sprintf(": byte %d", e.Offset)
	}
	return s + ": " + e.Err.Error()
}

func (e *ParseError) Unwrap() error { return e.Err }

// More sentinel errors of the SMF reader.
var (
	ErrBadData   = errors.New("status byte where a data byte belongs")
	ErrBadStatus = errors.New("invalid status byte")
)

// errorf wraps a sentinel with detail: "sentinel: detail".
func errorf(sentinel error, format string, args ...any) error {
	return fmt.Errorf("%w: %s", sentinel, fmt.Sprintf(format, args...))
}

package ingest

// ParseOptions control how one file is turned into pieces.
type ParseOptions struct {
	// Pedal extends note ends to the sustain pedal (CC 64) release, as performance
	// encodings do. Default true.
	Pedal bool
	// MaxEventsPerTrack caps the events read from one track; beyond it the file fails
	// with ErrTooManyEvents. Zero means the default (4,000,000).
	MaxEventsPerTrack int
}

// DefaultParseOptions returns the defaults: pedal on, default caps.
func DefaultParseOptions() ParseOptions {
	return ParseOptions{Pedal: true}
}

package ingest

// Wire constants of the Standard MIDI File format (SMF 1.0, "Standard MIDI Files 1.0",
// MIDI Manufacturers Association) and of its RIFF wrapping (RIFF RMID, Microsoft
// Multimedia Programming Interface and Data Specifications 1.0). Everything the
// reader knows about the byte layout is here.

// Chunk layout.
const (
	chunkHeaderLen = 8 // 4-byte type + 4-byte big-endian length
	mthdDataLen    = 6 // SMF 1.0: the MThd length is at least 6; longer headers are skipped past
)

// Chunk type IDs, as big-endian uint32 of their four ASCII bytes.
const (
	idMThd = 0x4D546864 // "MThd": header chunk
	idMTrk = 0x4D54726B // "MTrk": track chunk
	idRIFF = 0x52494646 // "RIFF": RIFF container
	idRMID = 0x524D4944 // "RMID": RIFF form type of a wrapped SMF
	idData = 0x64617461 // "data": RIFF chunk holding the SMF bytes
)

// SMF formats (MThd format word).
const (
	format0 = 0 // one multi-channel track
	format1 = 1 // simultaneous tracks sharing one tempo map
	format2 = 2 // independent single-track patterns
)

// Division word.
const (
	divisionSMPTE = 0x8000 // bit 15 set: SMPTE timing; high byte is -fps, low byte ticks per frame
	smpteDropCode = 29     // SMF 1.0: the -29 frame code means 30 drop-frame, i.e. 29.97 fps
)

// smpteDropFPS is the real rate of the drop-frame code: 30000/1001 frames per second (SMPTE 12M).
const smpteDropFPS = 30000.0 / 1001.0

// Variable-length quantities.
const (
	vlqMaxBytes = 4          // SMF 1.0: "the largest number which is allowed is 0FFFFFFF", i.e. four bytes
	vlqMore     = 0x80       // continuation bit of a VLQ byte
	vlqMax      = 0x0FFFFFFF // largest representable value
)

// Status bytes. A channel status is the high nibble (message type) ORed with the channel.
const (
	statusBit         = 0x80 // bytes with the top bit set are status bytes, others data bytes
	statusNoteOff     = 0x80 // key, velocity
	statusNoteOn      = 0x90 // key, velocity; velocity 0 means note-off (SMF 1.0 / MIDI 1.0)
	statusPolyTouch   = 0xA0 // key, pressure
	statusControl     = 0xB0 // controller, value
	statusProgram     = 0xC0 // program (one data byte)
	statusChanTouch   = 0xD0 // pressure (one data byte)
	statusPitchBend   = 0xE0 // LSB, MSB
	statusSysEx       = 0xF0 // SMF: F0 <len> <bytes after F0>
	statusEscape      = 0xF7 // SMF: F7 <len> <bytes>: SysEx continuation packet or escaped bytes
	statusMeta        = 0xFF // SMF: FF <type> <len> <bytes>
	statusTypeMask    = 0xF0 // message type nibble
	statusChannelMask = 0x0F // channel nibble
	sysExEnd          = 0xF7 // the byte ending a complete SysEx message
)

// Meta event types (SMF 1.0, "Meta-Events").
const (
	metaSequenceNumber = 0x00
	metaText           = 0x01
	metaTrackName      = 0x03 // Sequence/Track Name
	metaChannelPrefix  = 0x20
	metaEndOfTrack     = 0x2F // FF 2F 00
	metaTempo          = 0x51 // FF 51 03 tt tt tt: microseconds per quarter note
	metaSMPTEOffset    = 0x54
	metaTimeSignature  = 0x58 // FF 58 04 nn dd cc bb: numerator, denominator as a power of 2
	metaKeySignature   = 0x59 // FF 59 02 sf mi: sharps (negative: flats), 1 = minor
	metaSequencer      = 0x7F
)

// Meta payload lengths the reader interprets.
const (
	tempoLen   = 3
	timeSigLen = 2 // numerator and denominator power; the two clock fields are not needed
	keySigLen  = 2
	maxDenPow  = 7 // 2^7 = 128 is the largest denominator a Meter can hold
)

// Defaults of the format and of General MIDI.
const (
	defaultUSPerQuarter = 500000 // SMF 1.0: 120 beats per minute when no Set Tempo event is given
	defaultMeterNum     = 4      // SMF 1.0: 4/4 when no Time Signature event is given
	defaultMeterDenom   = 4
	drumChannel         = 9  // General MIDI 1: channel 10 (index 9) is percussion
	ccSustain           = 64 // MIDI 1.0 controller 64: damper (sustain) pedal
	pedalDownMin        = 64 // MIDI 1.0: values 0-63 off, 64-127 on
	numChannels         = 16
	numKeys             = 128
)

// defaultMaxEventsPerTrack is the cap on events read from one track when
// ParseOptions.MaxEventsPerTrack is zero.
const defaultMaxEventsPerTrack = 4000000

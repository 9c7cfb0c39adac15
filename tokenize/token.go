package tokenize

// Token is one element of an encoded stream. Every token knows when it happens and,
// where it has one, which pitch it carries; the relpos stage relies on both.
type Token struct {
	ID    int32 // vocabulary id
	Time  int32 // the stream's time unit: ms (performance) or grid steps (beat-grid)
	MS    int32 // milliseconds from the piece start, in both encodings
	Pitch int16 // 0-127, or -1 for tokens without a pitch
	Inst  int16 // -1 none; 0-127 General MIDI program; InstDrums for drums
}

// InstDrums is the Inst value of drum tokens (General MIDI 1 channel 10).
const InstDrums = 128

// Variant labels one augmentation of a piece.
type Variant struct {
	Transpose int     // semitones; drums untouched
	Stretch   float64 // tempo stretch factor (performance encoding); 1 for none
}

// Window is one training window: at most max_len tokens cut from the stream of one
// variant of one piece.
type Window struct {
	Index   int // index of the window within the piece and variant
	Variant Variant
	Tokens  []Token // valid only until the next window is produced
	// Prefix is the number of leading tokens that restate the state at the cut;
	// Tokens[Prefix:] is the stream from index Start on.
	Prefix int
	Start  int // index in the variant's stream of Tokens[Prefix]
}

// put appends one token to d. It appends a zero token and then stores the fields
// into it: an appended struct literal is built on the stack and copied with one wide
// load right after its narrow stores, which stalls store forwarding (a loop of such
// appends measured about three times slower than one storing the fields).
func put(d []Token, id, time, ms int32, pitch, inst int16) []Token {
	d = append(d, Token{})
	t := &d[len(d)-1]
	t.ID, t.Time, t.MS, t.Pitch, t.Inst = id, time, ms, pitch, inst
	return d
}

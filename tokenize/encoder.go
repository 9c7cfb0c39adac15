package tokenize

import (
	"errors"
	"fmt"
	"math"
	"strconv"

	"github.com/relshard/relshard/ingest"
)

// Stats counts what encoding one variant of a piece did to its notes.
type Stats struct {
	Notes        int `json:"notes"`         // notes in the piece
	Encoded      int `json:"encoded"`       // notes in the stream
	DrumsDropped int `json:"drums_dropped"` // drum notes left out (drums: drop)
	OutOfRange   int `json:"out_of_range"`  // notes transposed out of 0-127, left out
	// Merged counts performance notes dropped because another note of the same key
	// starts at the same quantized time (a key cannot sound twice in one event
	// stream); the longest is kept (then the loudest).
	Merged int `json:"merged"`
	// Retriggered counts performance notes cut short because a later note of the
	// same key starts before they end (the earlier note ends at the later onset).
	Retriggered int `json:"retriggered"`
	Clipped     int `json:"clipped"`    // grid notes longer than max_duration_steps, clipped to it
	Lengthened  int `json:"lengthened"` // grid notes shorter than one step, lengthened to one step
	// MetersMoved counts grid meter changes that fall inside a bar; they take
	// effect at the next bar line.
	MetersMoved int `json:"meters_moved"`
	// MetersUnsupported counts meters with no grid token; 4/4 bars are used instead.
	MetersUnsupported int `json:"meters_unsupported"`
	Tokens            int `json:"tokens"` // tokens in the stream
}

// Errors of the encoder.
var (
	ErrTooLong     = errors.New("piece too long to encode")
	ErrBadPiece    = errors.New("invalid piece")
	ErrBadVariant  = errors.New("invalid variant")
	errInternalBug = errors.New("internal error")
)

// Limits of the encoder, so a hostile file cannot make it run away.
const (
	// MaxStreamTokens caps one stream (about 24 hours of dense piano).
	MaxStreamTokens = 1 << 22
	// maxMS caps note times (about 24 days) so that ms fit in int32.
	maxMS = math.MaxInt32 - 1_000_000
)

// Identity is the variant that leaves a piece as it is.
var Identity = Variant{Transpose: 0, Stretch: 1}

// String labels a variant: "t+2 s1.1", "t0 s1" for the identity.
func (v Variant) String() string {
	t := strconv.Itoa(v.Transpose)
	if v.Transpose > 0 {
		t = "+" + t
	}
	return "t" + t + " s" + strconv.FormatFloat(v.Stretch, 'g', -1, 64)
}

// Encoder encodes pieces with one config. It reuses internal buffers, so it is not
// safe for concurrent use: make one per worker.
type Encoder struct {
	cfg      Config
	vocab    *Vocab
	variants []Variant
	clock    clock
	ticks    tickSteps // of the grid piece being encoded
	// dropDrums is cfg.Drums == DrumsDrop, compared once instead of per note.
	dropDrums bool

	pnotes []pnote
	offs   []uint64
	gnotes []gnote
	bars   []barInfo
	marks  []barMark // of the grid stream last encoded
	stream []Token
	window []Token
}

// NewEncoder checks cfg and builds its vocabulary.
func NewEncoder(cfg Config) (*Encoder, error) {
	v, err := NewVocab(cfg)
	if err != nil {
		return nil, err
	}
	e := &Encoder{cfg: cfg, vocab: v, dropDrums: cfg.Drums == DrumsDrop}
	e.variants = append(e.variants, Identity)
	stretch := cfg.Stretch
	if len(stretch) == 0 {
		stretch = []float64{1}
	}
	transpose := cfg.Transpose
	if len(transpose) == 0 {
		transpose = []int{0}
	}
	for _, t := range transpose {
		for _, s := range stretch {
			if vr := (Variant{Transpose: t, Stretch: s}); vr != Identity {
				e.variants = append(e.variants, vr)
			}
		}
	}
	return e, nil
}

// Vocab is the encoder's vocabulary.
func (e *Encoder) Vocab() *Vocab { return e.vocab }

// Config is the encoder's config.
func (e *Encoder) Config() Config { return e.cfg }

// Variants lists the augmentation variants: the identity first, then every
// transpose × stretch combination in config order.
func (e *Encoder) Variants() []Variant { return append([]Variant(nil), e.variants...) }

// TimeUnit is the unit of Token.Time: "ms" or "grid".
func (e *Encoder) TimeUnit() string {
	if e.cfg.Encoding == Grid {
		return "grid"
	}
	return "ms"
}

// Encode appends the stream of variant v of p to dst and returns it. The stream
// begins with the begin token and ends with the end token. Encode does no per-token
// allocation beyond growing dst and its own reused buffers.
func (e *Encoder) Encode(p *ingest.Piece, v Variant, dst []Token) ([]Token, Stats, error) {
	if p == nil {
		return dst, Stats{}, fmt.Errorf("encode: %w: nil piece", ErrBadPiece)
	}
	if v.Transpose < -maxTranspose || v.Transpose > maxTranspose {
		return dst, Stats{}, fmt.Errorf("encode: %w: transpose %d", ErrBadVariant, v.Transpose)
	}
	if !(v.Stretch >= 0.25 && v.Stretch <= 4) {
		return dst, Stats{}, fmt.Errorf("encode: %w: stretch %v", ErrBadVariant, v.Stretch)
	}
	if e.cfg.Encoding == Grid {
		if v.Stretch != 1 {
			return dst, Stats{}, fmt.Errorf("encode: %w: stretch %v with the grid encoding", ErrBadVariant, v.Stretch)
		}
		return e.encodeGrid(p, v, dst)
	}
	return e.encodePerformance(p, v, dst)
}

// Windows encodes every variant of p and calls yield with each window, variants in
// Variants order and windows in stream order. Window.Tokens is reused: copy it to
// keep it. An error from yield stops the walk and is returned.
//
// A window holds at most max_len tokens: Tokens[:Prefix] restate the state at the
// cut, Tokens[Prefix:] are the stream from index Start on, so each window decodes on
// its own. The performance prefix is the current set-velocity; the grid prefix is
// the current meter and tempo, then (unless the window opens with a bar) the current
// bar and position, then the current instrument. The first window has no prefix.
// With the default stride (max_len) the stream parts of consecutive windows follow
// each other without gap or overlap; a smaller stride overlaps them. Grid windows
// never split a note's pitch, duration and velocity, nor a bar from its meter and
// tempo. A note whose note-on and note-off fall in different windows is cut: decoded
// alone, the earlier window ends it at its last time and the later window ignores
// the unmatched note-off. Windows shorter than min_len (the tail) are dropped.
func (e *Encoder) Windows(p *ingest.Piece, yield func(Window) error) error {
	for _, v := range e.variants {
		var err error
		e.stream, _, err = e.Encode(p, v, e.stream[:0])
		if err != nil {
			return fmt.Errorf("variant %s: %w", v, err)
		}
		if err := e.cut(e.stream, v, yield, true); err != nil {
			return err
		}
	}
	return nil
}

// WindowsOf cuts an already encoded stream (of this encoder's config) into windows,
// as Windows does for one variant.
func (e *Encoder) WindowsOf(stream []Token, v Variant, yield func(Window) error) error {
	return e.cut(stream, v, yield, false)
}

// cutState follows a stream up to a cut point to know the state a window needs.
type cutState struct {
	vel      Token // last set-velocity (performance); ID 0 if none
	bar      Token // last bar token (grid)
	meter    Token
	tempo    Token
	pos      Token // last position in the current bar; ID 0 if none yet
	inst     Token // last inst token
	prevTime int32 // time and ms after the last token
	prevMS   int32
	velDone  int // stream index up to which look-backs have been (performance): they stop there
}

// cut yields the windows of stream s. With inPlace (the encoder's own stream) and a
// stride that leaves no overlap, a window's prefix is written over the end of the
// previous window, which its consumer no longer holds, so no tokens are copied.
func (e *Encoder) cut(s []Token, v Variant, yield func(Window) error, inPlace bool) error {
	n := len(s)
	maxLen, stride, minLen := e.cfg.MaxLen, e.cfg.stride(), e.cfg.MinLen
	grid := e.cfg.Encoding == Grid
	var st cutState
	at := 0   // the state covers s[:at]
	mark := 0 // bar marks before at (grid, inPlace)
	start, idx := 0, 0
	for start < n {
		if grid && inPlace {
			at = e.gridStateAt(&st, s, at, start, &mark)
		} else if grid {
			at = e.followGridState(&st, s, at, start)
		} else if start > 0 {
			e.lastVelocity(&st, s, start)
		}
		w := e.window[:0]
		body := start
		if start > 0 {
			w, body = e.prefix(w, &st, s, start)
		}
		room := maxLen - len(w)
		end := min(n, body+room)
		if grid && end < n {
			for end > body && !e.startable(s[end].ID) {
				end--
			}
			if end == body {
				return fmt.Errorf("cut: %w: no window boundary in %d tokens at token %d", errInternalBug, room, body)
			}
		}
		plen := len(w)
		e.window = w
		if inPlace && stride >= end-body && plen <= body {
			copy(s[body-plen:body], w)
			w = s[body-plen : end]
		} else {
			w = append(w, s[body:end]...)
			e.window = w
		}
		if len(w) >= minLen && len(w) > 0 {
			if err := yield(Window{Index: idx, Variant: v, Tokens: w, Start: start, Prefix: plen}); err != nil {
				return err
			}
			idx++
		}
		if end >= n {
			break
		}
		next := min(start+stride, end)
		if next <= start {
			next = end
		}
		for grid && next < end && !e.startable(s[next].ID) {
			next++
		}
		start = next
	}
	return nil
}

// gridStateAt brings st, which covers s[:at], up to s[:start], and returns the new
// coverage (start). When a bar lies in between it starts from that bar's mark,
// following only the tokens after it; mi is the mark index reached so far.
func (e *Encoder) gridStateAt(st *cutState, s []Token, at, start int, mi *int) int {
	marks := e.marks
	i := *mi
	for i < len(marks) && int(marks[i].at) < start {
		i++
	}
	*mi = i
	if i > 0 && int(marks[i-1].at) >= at {
		m := &marks[i-1]
		st.bar, st.pos, st.meter, st.tempo, st.inst = s[m.at], Token{}, m.meter, m.tempo, m.inst
		at = int(m.at) + 1
	}
	return e.followGridState(st, s, at, start)
}

// followGridState applies the state tokens of s[at:start] (bar, meter, tempo,
// position, instrument) to st and returns start.
func (e *Encoder) followGridState(st *cutState, s []Token, at, start int) int {
	kinds := e.vocab.kinds
	for ; at < start; at++ {
		switch kinds[s[at].ID] {
		case KindBar:
			st.bar = s[at]
			st.pos = Token{}
		case KindMeter:
			st.meter = s[at]
		case KindTempo:
			st.tempo = s[at]
		case KindPosition:
			st.pos = s[at]
		case KindInst:
			st.inst = s[at]
		}
	}
	return at
}

// startable reports whether a grid window may begin at a token of this id: not in
// the middle of a note, not between a bar and its meter and tempo.
func (e *Encoder) startable(id int32) bool {
	switch e.vocab.kinds[id] {
	case KindDuration, KindVelocity, KindMeter, KindTempo:
		return false
	}
	return true
}

// lastVelocity finds the performance state at a cut by looking back from it: the
// time and the latest set-velocity (usually a few tokens back).
func (e *Encoder) lastVelocity(st *cutState, s []Token, start int) {
	st.prevTime, st.prevMS = s[start-1].Time, s[start-1].MS
	lo, hi := e.vocab.velBase, e.vocab.velBase+int32(e.cfg.VelocityBins)
	// What lies before velDone was looked at for an earlier cut: st.vel is the latest
	// set-velocity there, so each token is looked at once however rare they are.
	for i := start - 1; i >= st.velDone; i-- {
		if id := s[i].ID; id >= lo && id < hi {
			st.vel = s[i]
			break
		}
	}
	st.velDone = start
}

// prefix appends the state a window starting at s[start] needs and returns the index
// of the first stream token the window takes.
func (e *Encoder) prefix(w []Token, st *cutState, s []Token, start int) ([]Token, int) {
	first := e.vocab.kinds[s[start].ID]
	if e.cfg.Encoding == Performance {
		if st.vel.ID != 0 && first != KindVelocity {
			t := st.vel
			t.Time, t.MS = st.prevTime, st.prevMS
			w = append(w, t)
		}
		return w, start
	}
	if st.bar.ID == 0 {
		return w, start // before the first bar: nothing to restate
	}
	// Meter and tempo first: before a bar token they set up the bar it opens.
	at := st.bar
	if first == KindBar {
		at = s[start]
	}
	for _, t := range [2]Token{st.meter, st.tempo} {
		if t.ID != 0 {
			t.Time, t.MS = at.Time, at.MS
			w = append(w, t)
		}
	}
	if first != KindBar {
		w = append(w, st.bar)
		if first != KindPosition && st.pos.ID != 0 {
			w = append(w, st.pos)
		}
	}
	if first != KindInst && st.inst.ID != 0 {
		t := st.inst
		t.Time, t.MS = w[len(w)-1].Time, w[len(w)-1].MS
		w = append(w, t)
	}
	return w, start
}

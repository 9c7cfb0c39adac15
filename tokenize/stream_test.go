package tokenize

import (
	"testing"

	"github.com/relshard/relshard/ingest"
)

// TestStreamInvariants checks, on the reference files (when present) and a random
// piece, for both encodings and augmented variants: times never decrease, pitch is
// set exactly on the tokens that name a key, instruments are set on note tokens and
// drums carry InstDrums.
func TestStreamInvariants(t *testing.T) {
	rp := randomPiece(5, 2000, true)
	sortNotes(rp.Notes)
	pieces := []ingest.Piece{*rp}
	if files, _ := refGlob(); len(files) > 0 {
		_, ref := refPieces(t)
		pieces = append(pieces, ref...)
	}
	for _, enc := range []string{Performance, Grid} {
		cfg := DefaultConfig()
		cfg.Encoding = enc
		cfg.Drums = DrumsKeep
		cfg.Transpose = []int{0, -5, 7}
		if enc == Performance {
			cfg.Stretch = []float64{1, 0.8, 1.25}
		}
		e := mustEncoder(t, cfg)
		var s []Token
		for pi := range pieces {
			for _, v := range e.Variants() {
				var err error
				s, _, err = e.Encode(&pieces[pi], v, s[:0])
				if err != nil {
					t.Fatalf("%s piece %d %s: %v", enc, pi, v, err)
				}
				if s[0].ID != BeginID || s[len(s)-1].ID != EndID {
					t.Fatalf("%s piece %d %s: stream not framed by begin and end", enc, pi, v)
				}
				for i, tk := range s {
					if i > 0 && (tk.Time < s[i-1].Time || tk.MS < s[i-1].MS) {
						t.Fatalf("%s piece %d %s: time decreases at token %d", enc, pi, v, i)
					}
					k := e.vocab.kinds[tk.ID]
					named := k == KindNoteOn || k == KindNoteOff || k == KindHit || k == KindPitch
					if named != (tk.Pitch >= 0) || tk.Pitch > 127 {
						t.Fatalf("%s piece %d %s: token %d (%s) has pitch %d", enc, pi, v, i, e.vocab.Label(tk.ID), tk.Pitch)
					}
					if named && int(tk.Pitch) != e.vocab.entries[tk.ID].Value {
						t.Fatalf("%s: token %d (%s) carries pitch %d", enc, i, e.vocab.Label(tk.ID), tk.Pitch)
					}
					if k == KindHit && tk.Inst != InstDrums {
						t.Fatalf("%s: hit token %d has inst %d", enc, i, tk.Inst)
					}
					noteKind := k == KindNoteOn || k == KindNoteOff || k == KindHit || k == KindInst || k == KindPitch ||
						k == KindDuration || (enc == Grid && k == KindVelocity)
					if noteKind != (tk.Inst >= 0) || tk.Inst > InstDrums {
						t.Fatalf("%s: token %d (%s) has inst %d", enc, i, e.vocab.Label(tk.ID), tk.Inst)
					}
				}
			}
		}
	}
}

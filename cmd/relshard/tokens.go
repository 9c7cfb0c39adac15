package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"path/filepath"
	"text/tabwriter"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/export"
	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/tokenize"
)

// tokenFlags are the flags tokens, vocab and decode share to choose a tokenizer
// config: the config file's tokens section, then these flags.
type tokenFlags struct {
	configPath string
	encoding   string
	drums      string
}

func (o *tokenFlags) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.configPath, "config", "", "YAML config file, the one export reads (its tokens section is used); flags win over it")
	fs.StringVar(&o.encoding, "encoding", "", "token encoding: performance or grid (default from the config: performance)")
	fs.StringVar(&o.drums, "drums", "", "drums: drop or keep (default from the config: drop)")
}

// config loads the config file (or starts from base when given and no file is) and
// applies the flags the user set.
func (o *tokenFlags) config(cmd *cobra.Command, base *tokenize.Config) (export.Config, error) {
	cfg, err := loadConfig(o.configPath)
	if err != nil {
		return cfg, err
	}
	if base != nil && o.configPath == "" {
		cfg.Tokens = *base
	}
	applyFlags(cmd, &cfg, []flagSetter{
		{"encoding", func(c *export.Config) { c.Tokens.Encoding = o.encoding }},
		{"drums", func(c *export.Config) { c.Tokens.Drums = o.drums }},
	})
	if err := cfg.Tokens.Validate(); err != nil {
		return cfg, usageError("%v", err)
	}
	return cfg, nil
}

// tokensOptions are the flags and argument of relshard tokens.
type tokensOptions struct {
	tok      tokenFlags
	file     string
	json     bool
	piece    int
	fidelity bool

	cfg export.Config
}

func (o *tokensOptions) AddFlags(fs *pflag.FlagSet) {
	o.tok.AddFlags(fs)
	fs.BoolVar(&o.json, "json", false, "print one JSON object (the input of relshard decode) instead of a table")
	fs.IntVar(&o.piece, "piece", 0, "which piece of a format-2 file (each track is a piece), from 0")
	fs.BoolVar(&o.fidelity, "fidelity", false, "also report how well decoding recovers the notes")
}

func (o *tokensOptions) Validate(cmd *cobra.Command) error {
	if o.piece < 0 {
		return usageError("--piece %d: want 0 or more", o.piece)
	}
	cfg, err := o.tok.config(cmd, nil)
	if err != nil {
		return err
	}
	o.cfg = cfg
	return nil
}

// tokenJSON is one token of relshard tokens --json.
type tokenJSON struct {
	ID    int32  `json:"id"`
	Label string `json:"label,omitempty"`
	Time  int32  `json:"time"`
	MS    int32  `json:"ms"`
	Pitch int16  `json:"pitch"`
	Inst  int16  `json:"inst"`
}

// streamJSON is the output of relshard tokens --json and the input of relshard decode.
type streamJSON struct {
	File      string             `json:"file"`
	Piece     int                `json:"piece"`
	Pieces    int                `json:"pieces"`
	Encoding  string             `json:"encoding"`
	TimeUnit  string             `json:"time_unit"`
	VocabSize int                `json:"vocab_size"`
	Config    *tokenize.Config   `json:"config"`
	Stats     tokenize.Stats     `json:"stats"`
	Fidelity  *tokenize.Fidelity `json:"fidelity,omitempty"`
	Tokens    []tokenJSON        `json:"tokens"`
}

func runTokens(_ context.Context, o *tokensOptions, s *streams) error {
	iopt := o.cfg.Input.Options()
	data, err := ingest.Load(o.file, iopt.MaxFileSize)
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	pieces, err := ingest.Parse(filepath.Base(o.file), data, iopt.Parse)
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	if o.piece >= len(pieces) {
		return usageError("--piece %d: %s has %d piece(s)", o.piece, o.file, len(pieces))
	}
	p := &pieces[o.piece]
	enc, err := tokenize.NewEncoder(o.cfg.Tokens)
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	stream, st, err := enc.Encode(p, tokenize.Identity, nil)
	if err != nil {
		return &exitError{code: exitFailed, err: fmt.Errorf("%s: %w", o.file, err)}
	}
	var fid *tokenize.Fidelity
	if o.fidelity {
		f, err := enc.Fidelity(p)
		if err != nil {
			return &exitError{code: exitFailed, err: fmt.Errorf("%s: %w", o.file, err)}
		}
		fid = &f
	}
	v := enc.Vocab()
	out := streamJSON{File: o.file, Piece: o.piece, Pieces: len(pieces), Encoding: o.cfg.Tokens.Encoding,
		TimeUnit: enc.TimeUnit(), VocabSize: v.Size(), Config: &o.cfg.Tokens, Stats: st, Fidelity: fid,
		Tokens: make([]tokenJSON, len(stream))}
	for i, t := range stream {
		out.Tokens[i] = tokenJSON{ID: t.ID, Label: v.Label(t.ID), Time: t.Time, MS: t.MS, Pitch: t.Pitch, Inst: t.Inst}
	}
	if o.json {
		e := json.NewEncoder(s.Out)
		e.SetIndent("", " ")
		err = e.Encode(out)
	} else {
		err = writeTokensTable(s.Out, &out)
	}
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	return nil
}

func pct(n, of int) float64 {
	if of == 0 {
		return 0
	}
	return 100 * float64(n) / float64(of)
}

func writeTokensTable(w io.Writer, o *streamJSON) error {
	st := o.Stats
	unit := o.TimeUnit
	if unit == "grid" {
		unit = "grid steps"
	}
	fmt.Fprintf(w, "%s, piece %d of %d: %s encoding, %d tokens, %d of %d notes encoded, time in %s\n",
		o.File, o.Piece, o.Pieces, o.Encoding, len(o.Tokens), st.Encoded, st.Notes, unit)
	changed := []struct {
		n    int
		what string
	}{{st.DrumsDropped, "drum notes dropped"}, {st.OutOfRange, "notes out of range"},
		{st.Merged, "notes merged into a note of the same key and onset"}, {st.Retriggered, "notes cut by a later note of the same key"},
		{st.Clipped, "durations clipped"}, {st.Lengthened, "durations lengthened to one step"},
		{st.MetersMoved, "meter changes moved to the next bar line"}, {st.MetersUnsupported, "meters without a token (4/4 used)"}}
	for _, c := range changed {
		if c.n > 0 {
			fmt.Fprintf(w, "  %d %s\n", c.n, c.what)
		}
	}
	if f := o.Fidelity; f != nil {
		fmt.Fprintf(w, "fidelity: of %d notes, %d decoded and matched by key and onset; %d within the encoding's bound\n",
			f.Notes, f.Matched, f.WithinBound)
		fmt.Fprintf(w, "  exact timing and key: %d (%.1f%%); also exact velocity: %d (%.1f%%)\n",
			f.ExactTiming, pct(f.ExactTiming, f.Notes), f.Exact, 100*f.ExactShare())
		if f.Encoding == tokenize.Grid {
			fmt.Fprintf(w, "  on the grid: %d notes, %d recovered exactly\n", f.OnGrid, f.OnGridExact)
		}
		fmt.Fprintf(w, "  onset error: mean %.2f ms, max %.2f ms; release error max %.2f ms\n", f.MeanOnsetMS, f.MaxOnsetMS, f.MaxReleaseMS)
		fmt.Fprint(w, "  onset error distribution:")
		for _, b := range f.OnsetErrors {
			if b.UpToMS < 0 {
				fmt.Fprintf(w, " >%g ms: %d", f.OnsetErrors[len(f.OnsetErrors)-2].UpToMS, b.Notes)
			} else {
				fmt.Fprintf(w, " ≤%g ms: %d,", b.UpToMS, b.Notes)
			}
		}
		fmt.Fprintln(w)
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintf(tw, "#\tid\tlabel\ttime\tms\tpitch\tinst\t\n")
	dash := func(v int16) string {
		if v < 0 {
			return "-"
		}
		return fmt.Sprint(v)
	}
	for i, t := range o.Tokens {
		fmt.Fprintf(tw, "%d\t%d\t%s\t%d\t%d\t%s\t%s\t\n", i, t.ID, t.Label, t.Time, t.MS, dash(t.Pitch), dash(t.Inst))
	}
	return tw.Flush()
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &tokensOptions{}
		cmd := &cobra.Command{
			Use:   "tokens FILE",
			Short: "Print the token stream of one MIDI file",
			Long: `Encode one MIDI file (.mid, optionally .gz) and print its token stream: for each
token its id, label, time (ms in the performance encoding, grid steps in the grid
encoding), milliseconds, pitch and instrument (- when it has none). The stream is the
unaugmented one, before it is cut into windows.

Encodings: performance (note-on, note-off, time-shift, set-velocity events after Oore
et al. 2018; time in ms) or grid (bar, position, instrument, pitch, duration, velocity,
with meter and binned tempo at bar starts; time in grid steps). The encoding and its
parameters come from the tokens section of --config, then --encoding and --drums.

--json prints one object: file, piece, pieces, encoding, time_unit, vocab_size,
config (the full tokens config), stats (what encoding did to the notes), fidelity
(with --fidelity) and tokens [{id, label, time, ms, pitch, inst}]; relshard decode
reads it back. --fidelity adds how well decoding the stream recovers the file's notes:
the share recovered exactly and the distribution of onset errors.
` + exitCodesHelp,
			Args: cobra.ExactArgs(1),
			RunE: func(cmd *cobra.Command, args []string) error {
				o.file = args[0]
				if err := o.Validate(cmd); err != nil {
					return err
				}
				return runTokens(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}

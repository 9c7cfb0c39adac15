package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"slices"
	"strings"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/tokenize"
)

// maxTokensFile caps the JSON file relshard decode reads.
const maxTokensFile = 256 << 20

// decodeOptions are the flags and argument of relshard decode.
type decodeOptions struct {
	tok    tokenFlags
	in     string
	output string
}

func (o *decodeOptions) AddFlags(fs *pflag.FlagSet) {
	o.tok.AddFlags(fs)
	fs.StringVarP(&o.output, "output", "o", "", "MIDI file to write (- for standard output)")
}

func (o *decodeOptions) Validate() error {
	if o.output == "" {
		return usageError("-o FILE: no output file given")
	}
	return nil
}

// readTokens reads the input of relshard decode: the object relshard tokens --json
// writes, or a bare JSON array of ids or of {id, label} objects.
func readTokens(path string, in io.Reader) (ids []int32, labels []string, cfg *tokenize.Config, err error) {
	var data []byte
	if path == "-" {
		data, err = io.ReadAll(io.LimitReader(in, maxTokensFile+1))
	} else {
		var f *os.File
		if f, err = os.Open(path); err != nil {
			return nil, nil, nil, err
		}
		defer f.Close()
		data, err = io.ReadAll(io.LimitReader(f, maxTokensFile+1))
	}
	if err != nil {
		return nil, nil, nil, fmt.Errorf("%s: %w", path, err)
	}
	if len(data) > maxTokensFile {
		return nil, nil, nil, fmt.Errorf("%s: over %d MiB of JSON", path, maxTokensFile>>20)
	}
	var raw []json.RawMessage
	switch firstByte(data) {
	case '{':
		var s struct {
			Config *tokenize.Config   `json:"config"`
			Tokens *[]json.RawMessage `json:"tokens"`
		}
		if err := json.Unmarshal(data, &s); err != nil {
			return nil, nil, nil, fmt.Errorf("%s: %w", path, jsonError(data, err))
		}
		if s.Tokens == nil {
			return nil, nil, nil, fmt.Errorf("%s: no \"tokens\" array in the object", path)
		}
		raw, cfg = *s.Tokens, s.Config
	case '[':
		if err := json.Unmarshal(data, &raw); err != nil {
			return nil, nil, nil, fmt.Errorf("%s: %w", path, jsonError(data, err))
		}
	default:
		return nil, nil, nil, fmt.Errorf("%s: want a JSON object with \"tokens\" or an array of ids", path)
	}
	// Each token is an id or an object with an id (and optionally its label).
	toks := make([]tokenJSON, len(raw))
	for i, r := range raw {
		if firstByte(r) == '{' {
			err = json.Unmarshal(r, &toks[i])
		} else {
			err = json.Unmarshal(r, &toks[i].ID)
		}
		if err != nil {
			return nil, nil, nil, fmt.Errorf("%s: token %d: %w", path, i, err)
		}
	}
	ids = make([]int32, len(toks))
	labels = make([]string, len(toks))
	for i, t := range toks {
		ids[i], labels[i] = t.ID, t.Label
	}
	return ids, labels, cfg, nil
}

func firstByte(b []byte) byte {
	b = bytes.TrimLeft(b, " \t\r\n")
	if len(b) == 0 {
		return 0
	}
	return b[0]
}

// jsonError adds the line of a JSON syntax or type error.
func jsonError(data []byte, err error) error {
	var off int64 = -1
	var se *json.SyntaxError
	var te *json.UnmarshalTypeError
	switch {
	case errors.As(err, &se):
		off = se.Offset
	case errors.As(err, &te):
		off = te.Offset
	}
	if off < 0 || off > int64(len(data)) {
		return err
	}
	return fmt.Errorf("line %d: %w", bytes.Count(data[:off], []byte("\n"))+1, err)
}

func runDecode(_ context.Context, cmd *cobra.Command, o *decodeOptions, s *streams) error {
	ids, labels, fileCfg, err := readTokens(o.in, s.In)
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	if fileCfg != nil {
		if err := fileCfg.Validate(); err != nil {
			return &exitError{code: exitFailed, err: fmt.Errorf("%s: config: %w", o.in, err)}
		}
	}
	cfg, err := o.tok.config(cmd, fileCfg)
	if err != nil {
		return err
	}
	d, err := tokenize.NewDecoder(cfg.Tokens)
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	v, _ := tokenize.NewVocab(cfg.Tokens)
	for i, l := range labels {
		if l != "" && l != v.Label(ids[i]) {
			return &exitError{code: exitFailed, err: fmt.Errorf("%s: token %d: id %d is %q in the %s vocabulary, the file says %q (another config?)",
				o.in, i, ids[i], v.Label(ids[i]), cfg.Tokens.Encoding, l)}
		}
	}
	p, err := d.Decode(ids)
	if err != nil {
		return &exitError{code: exitFailed, err: fmt.Errorf("%s: %w", o.in, err)}
	}
	var buf bytes.Buffer
	if err := tokenize.WriteSMF(&buf, p); err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	report := s.Out
	if o.output == "-" {
		report = s.Err
		_, err = s.Out.Write(buf.Bytes())
	} else {
		err = os.WriteFile(o.output, buf.Bytes(), 0o644)
	}
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	fmt.Fprintf(report, "wrote %s: %d notes from %d tokens (%s encoding), %.2f s\n",
		o.output, len(p.Notes), len(ids), cfg.Tokens.Encoding, p.Duration())
	if len(p.Warnings) > 0 {
		var ws []string
		for _, k := range slices.Sorted(mapKeysOf(p.Warnings)) {
			ws = append(ws, fmt.Sprintf("%d %s", p.Warnings[k], k))
		}
		fmt.Fprintf(report, "  %s\n", strings.Join(ws, ", "))
	}
	return nil
}

func mapKeysOf(m ingest.Warnings) func(func(string) bool) {
	return func(yield func(string) bool) {
		for k := range m {
			if !yield(k) {
				return
			}
		}
	}
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &decodeOptions{}
		cmd := &cobra.Command{
			Use:   "decode TOKENS.json -o OUT.mid",
			Short: "Turn a token stream back into a MIDI file",
			Long: `Decode a token stream into a Standard MIDI File (format 1: a tempo and meter track,
then one track per channel; drums on channel 10). TOKENS.json (- for standard input)
is what relshard tokens --json writes, or a JSON array of ids, or of {id, label}
objects. The tokenizer config is the one in the file when it has one, else the tokens
section of --config; --encoding and --drums win over both. Labels, when given, must
match the ids in that vocabulary.

A stream may be a whole piece or one training window. Performance streams: an unmatched
note-off is ignored and notes still sounding at the end end there (both reported).
Grid streams must be well formed; the first token that is not is named in the error.
Decoded performance files have 500 ticks per quarter at 120 BPM, so one tick is one
millisecond; decoded grid files have a whole number of ticks per grid step.
` + exitCodesHelp,
			Args: cobra.ExactArgs(1),
			RunE: func(cmd *cobra.Command, args []string) error {
				o.in = args[0]
				if err := o.Validate(); err != nil {
					return err
				}
				return runDecode(cmd.Context(), cmd, o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}

package main

import (
	"context"
	"encoding/json"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/tokenize"
)

// vocabOptions are the flags of relshard vocab.
type vocabOptions struct {
	tok tokenFlags
	cfg tokenize.Config
}

func (o *vocabOptions) AddFlags(fs *pflag.FlagSet) { o.tok.AddFlags(fs) }

func (o *vocabOptions) Validate(cmd *cobra.Command) error {
	cfg, err := o.tok.config(cmd, nil)
	if err != nil {
		return err
	}
	o.cfg = cfg.Tokens
	return nil
}

func runVocab(_ context.Context, o *vocabOptions, s *streams) error {
	v, err := tokenize.NewVocab(o.cfg)
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	data, err := json.MarshalIndent(v, "", " ")
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	if _, err := s.Out.Write(append(data, '\n')); err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	return nil
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &vocabOptions{}
		cmd := &cobra.Command{
			Use:   "vocab",
			Short: "Print the token vocabulary of a config as JSON",
			Long: `Print the vocabulary of the tokenizer config as JSON: encoding, size, the config
itself and every token in id order, special tokens first (pad = 0, begin = 1, end = 2):
{id, label, kind, value}, with den for meters and bpm (the bin centre) for tempos.
Kinds: special, note_on, note_off, shift (value in ms), velocity (value: bin), hit
(drums), bar, meter, tempo (value: bin), position (value: grid steps into the bar),
inst (value: first General MIDI program of the family, 128 for drums), pitch, duration
(value: grid steps). The vocabulary is the same for the same config on every run.
` + exitCodesHelp,
			Args: cobra.NoArgs,
			RunE: func(cmd *cobra.Command, args []string) error {
				if err := o.Validate(cmd); err != nil {
					return err
				}
				return runVocab(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}

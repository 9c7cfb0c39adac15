package main

import (
	"context"
	"encoding/json"
	"fmt"
	"maps"
	"slices"
	"strings"
	"text/tabwriter"

	"github.com/relshard/relshard/ingest"
	"github.com/spf13/cobra"
	"github.com/spf13/pflag"
)

// notesOptions are the flags of relshard notes.
type notesOptions struct {
	file        string
	json        bool
	noPedal     bool
	maxFileSize string
}

// AddFlags registers the flags.
func (o *notesOptions) AddFlags(fs *pflag.FlagSet) {
	fs.BoolVar(&o.json, "json", false, "print a JSON object instead of tables")
	fs.BoolVar(&o.noPedal, "no-pedal", false, "do not extend note ends to the sustain pedal release")
	fs.StringVar(&o.maxFileSize, "max-file-size", "64MiB", "largest MIDI file read (bytes, or with KiB, MiB, GiB)")
}

// Validate checks the flags.
func (o *notesOptions) Validate() error {
	if _, err := parseSize(o.maxFileSize); err != nil {
		return usageError("--max-file-size: %v", err)
	}
	return nil
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &notesOptions{}
		cmd := &cobra.Command{
			Use:   "notes FILE",
			Short: "Print the notes and tempo map of one MIDI file",
			Long: `Print the notes of one MIDI file (.mid, .midi, .smf, .rmi, optionally .gz) as
relshard reads them: note-on and note-off paired per track, channel and key, the
General MIDI program of each note's channel, drums (channel 10), start and end in ticks
and in seconds through the tempo map, and the tempo map itself.

With --json the output is one object with exactly these fields:
  ticks_per_quarter  the file's division (0 for SMPTE division)
  tempos             [{tick, us_per_quarter}], every Set Tempo event, sorted by tick
  notes              [{track, channel, program, pitch, velocity, start_tick, end_tick,
                      start_s, end_s, drum}], sorted by start tick, track, channel, pitch
  warnings           {kind: count}
Format-2 files list the notes of all their tracks (patterns) together.
` + exitCodesHelp,
			Args: cobra.ExactArgs(1),
			RunE: func(cmd *cobra.Command, args []string) error {
				o.file = args[0]
				if err := o.Validate(); err != nil {
					return err
				}
				return runNotes(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}

// noteJSON is one note of relshard notes --json.
type noteJSON struct {
	Track    int     `json:"track"`
	Channel  uint8   `json:"channel"`
	Program  uint8   `json:"program"`
	Pitch    uint8   `json:"pitch"`
	Velocity uint8   `json:"velocity"`
	StartTk  int64   `json:"start_tick"`
	EndTk    int64   `json:"end_tick"`
	StartS   float64 `json:"start_s"`
	EndS     float64 `json:"end_s"`
	Drum     bool    `json:"drum"`
}

type tempoJSON struct {
	Tick         int64  `json:"tick"`
	USPerQuarter uint32 `json:"us_per_quarter"`
}

// notesJSON is the object relshard notes --json prints.
type notesJSON struct {
	TicksPerQuarter int             `json:"ticks_per_quarter"`
	Tempos          []tempoJSON     `json:"tempos"`
	Notes           []noteJSON      `json:"notes"`
	Warnings        ingest.Warnings `json:"warnings"`
}

func runNotes(ctx context.Context, o *notesOptions, s *streams) error {
	max, _ := parseSize(o.maxFileSize)
	data, err := ingest.Load(o.file, max)
	if err != nil {
		return err
	}
	popts := ingest.DefaultParseOptions()
	popts.Pedal = !o.noPedal
	pieces, err := ingest.Parse(o.file, data, popts)
	if err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	out := notesJSON{Tempos: []tempoJSON{}, Notes: []noteJSON{}, Warnings: ingest.Warnings{}}
	if len(pieces) > 0 {
		out.TicksPerQuarter = pieces[0].TicksPerQuarter
	}
	for i := range pieces {
		p := &pieces[i]
		for _, t := range p.Tempos {
			out.Tempos = append(out.Tempos, tempoJSON{t.Tick, t.USPerQuarter})
		}
		for _, n := range p.Notes {
			out.Notes = append(out.Notes, noteJSON{n.Track, n.Channel, n.Program, n.Pitch, n.Velocity,
				n.StartTick, n.EndTick, n.Start, n.End, n.Drum})
		}
		for k, c := range p.Warnings {
			out.Warnings.Add(k, c)
		}
	}
	if len(pieces) > 1 {
		// Format 2: each piece is sorted; merge them in the same order.
		slices.SortStableFunc(out.Tempos, func(a, b tempoJSON) int { return int(a.Tick - b.Tick) })
		slices.SortStableFunc(out.Notes, func(a, b noteJSON) int {
			switch {
			case a.StartTk != b.StartTk:
				return cmpInt64(a.StartTk, b.StartTk)
			case a.Track != b.Track:
				return a.Track - b.Track
			case a.Channel != b.Channel:
				return int(a.Channel) - int(b.Channel)
			}
			return int(a.Pitch) - int(b.Pitch)
		})
	}
	if o.json {
		enc := json.NewEncoder(s.Out)
		enc.SetIndent("", "  ")
		return enc.Encode(out)
	}
	return writeNotesTable(s, o.file, pieces, &out)
}

func cmpInt64(a, b int64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// noteNames spell the pitch classes (common practice: sharps, middle C = C4 = key 60).
var noteNames = [12]string{"C", "C#", "D", "D#", "E", "F", "F#", "G", "G#", "A", "A#", "B"}

func keyName(k uint8) string { return fmt.Sprintf("%s%d", noteNames[k%12], int(k)/12-1) }

func writeNotesTable(s *streams, file string, pieces []ingest.Piece, out *notesJSON) error {
	w := tabwriter.NewWriter(s.Out, 0, 0, 2, ' ', tabwriter.AlignRight)
	p0 := &pieces[0]
	division := fmt.Sprintf("%d ticks per quarter", p0.TicksPerQuarter)
	if p0.SMPTEFPS > 0 {
		division = fmt.Sprintf("SMPTE %g fps x %d ticks per frame", p0.SMPTEFPS, p0.TicksPerFrame)
	}
	fmt.Fprintf(s.Out, "%s: format %d, %s, %d piece(s), %d notes\n", file, p0.Format, division, len(pieces), len(out.Notes))
	var names []string
	for i := range pieces {
		names = append(names, pieces[i].TrackNames...)
	}
	if len(names) > 0 {
		fmt.Fprintf(s.Out, "track names: %s\n", strings.Join(quoteAll(names), ", "))
	}
	fmt.Fprintln(s.Out, "\ntempo map:")
	fmt.Fprintln(w, "tick\tus/quarter\tBPM\t")
	if len(out.Tempos) == 0 || out.Tempos[0].Tick > 0 {
		fmt.Fprintln(w, "0\t500000\t120\t(SMF 1.0 default)")
	}
	for _, t := range out.Tempos {
		fmt.Fprintf(w, "%d\t%d\t%.3f\t\n", t.Tick, t.USPerQuarter, 60e6/float64(max(t.USPerQuarter, 1)))
	}
	if err := w.Flush(); err != nil {
		return err
	}
	fmt.Fprintln(s.Out, "\nnotes:")
	fmt.Fprintln(w, "track\tch\tprog\tkey\t\tvel\tstart tick\tend tick\tstart s\tend s\tdrum\t")
	for _, n := range out.Notes {
		drum := ""
		if n.Drum {
			drum = "drum"
		}
		fmt.Fprintf(w, "%d\t%d\t%d\t%d\t%s\t%d\t%d\t%d\t%.3f\t%.3f\t%s\t\n", n.Track, n.Channel, n.Program, n.Pitch,
			keyName(n.Pitch), n.Velocity, n.StartTk, n.EndTk, n.StartS, n.EndS, drum)
	}
	if err := w.Flush(); err != nil {
		return err
	}
	if len(out.Warnings) > 0 {
		fmt.Fprintln(s.Out, "\nwarnings:")
		for _, k := range slices.Sorted(maps.Keys(out.Warnings)) {
			fmt.Fprintf(s.Out, "  %s: %d\n", k, out.Warnings[k])
		}
	}
	return nil
}

func quoteAll(ss []string) []string {
	out := make([]string, len(ss))
	for i, s := range ss {
		out[i] = fmt.Sprintf("%q", s)
	}
	return out
}

package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"runtime/debug"
	"strings"

	"github.com/spf13/cobra"
)

// Exit codes, the same for every command.
const (
	exitOK      = 0 // everything read and done
	exitFailed  = 1 // the run failed (I/O error, bad config, a check failed)
	exitUsage   = 2 // bad flags or arguments
	exitSkipped = 3 // the run finished but some input files were skipped
)

const exitCodesHelp = `
Exit status:
  0  success: every input read
  1  the run failed (I/O error, invalid config, failed check)
  2  bad flags or arguments
  3  finished, but some input files were skipped (see the report)`

// streams are the injected I/O of a command, so tests can run commands on buffers.
type streams struct {
	In       io.Reader
	Out, Err io.Writer
	// ErrIsTerminal reports whether Err is a terminal (progress bars only then).
	ErrIsTerminal bool
}

func defaultStreams() *streams {
	st, _ := os.Stderr.Stat()
	return &streams{In: os.Stdin, Out: os.Stdout, Err: os.Stderr,
		ErrIsTerminal: st != nil && st.Mode()&os.ModeCharDevice != 0}
}

// exitError carries an exit code through cobra.
type exitError struct {
	code int
	err  error
}

func (e *exitError) Error() string {
	if e.err == nil {
		return fmt.Sprintf("exit status %d", e.code)
	}
	return e.err.Error()
}
func (e *exitError) Unwrap() error { return e.err }

// usageError marks an error in flags or arguments.
func usageError(format string, a ...any) error {
	return &exitError{code: exitUsage, err: fmt.Errorf(format, a...)}
}

// commands registers each command's constructor; each command file adds itself in init.
var commands []func(*streams) *cobra.Command

func register(f func(*streams) *cobra.Command) { commands = append(commands, f) }

func newRootCmd(s *streams) *cobra.Command {
	root := &cobra.Command{
		Use:   "relshard",
		Short: "Prepare MIDI corpora for relative-attention transformers",
		Long: `relshard turns a MIDI corpus into clean, deduplicated, tokenized Parquet training shards,
and reports how relative-position buckets (token distance, time, pitch) cover the
offsets in the data.` + "\n" + exitCodesHelp,
		SilenceUsage:  true,
		SilenceErrors: true,
	}
	root.SetOut(s.Out)
	root.SetErr(s.Err)
	root.SetIn(s.In)
	root.SetFlagErrorFunc(func(c *cobra.Command, err error) error {
		return &exitError{code: exitUsage, err: fmt.Errorf("%w\n%s", err, c.UsageString())}
	})
	for _, f := range commands {
		root.AddCommand(f(s))
	}
	return root
}

// run executes the command line and maps the outcome to an exit code: the one place
// where errors become exit codes.
func run(args []string, s *streams) int {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	root := newRootCmd(s)
	root.SetArgs(args)
	err := root.ExecuteContext(ctx)
	if err == nil {
		return exitOK
	}
	var ee *exitError
	if errors.As(err, &ee) {
		if ee.err != nil {
			fmt.Fprintln(s.Err, "relshard:", ee.err)
		}
		return ee.code
	}
	fmt.Fprintln(s.Err, "relshard:", err)
	if isArgError(err) {
		return exitUsage
	}
	return exitFailed
}

// isArgError recognises cobra's own argument errors (unknown command, wrong arg count).
func isArgError(err error) bool {
	msg := err.Error()
	for _, p := range []string{"unknown command", "accepts ", "requires at least", "unknown flag", "unknown shorthand"} {
		if strings.Contains(msg, p) {
			return true
		}
	}
	return false
}

// version is set at link time with -ldflags "-X main.version=v1.2.3"; otherwise the
// module version from the build info is used.
var version = ""

func toolVersion() string {
	if version != "" {
		return version
	}
	if bi, ok := debug.ReadBuildInfo(); ok && bi.Main.Version != "" && bi.Main.Version != "(devel)" {
		return bi.Main.Version
	}
	return "devel"
}

func init() {
	register(func(s *streams) *cobra.Command {
		return &cobra.Command{
			Use:   "version",
			Short: "Print the relshard version",
			Long:  "Print the relshard version.\n" + exitCodesHelp,
			Args:  cobra.NoArgs,
			RunE: func(cmd *cobra.Command, args []string) error {
				_, err := fmt.Fprintln(s.Out, "relshard", toolVersion())
				return err
			},
		}
	})
}

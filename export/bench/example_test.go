package bench_test

import (
	"context"
	"fmt"
	"log"
	"os"

	"github.com/relshard/relshard/export/bench"
)

// Run measures the suite and reports one Measure per line of the table that
// relshard bench prints. Here it is the smoke suite on a small generated corpus,
// in a folder of its own; set Corpus to measure on a folder of your own files, and
// Exe to a relshard binary to include the peak-memory exports. The figures are
// timings of this machine, so the example has no fixed output.
func ExampleRun() {
	tmp, err := os.MkdirTemp("", "relshard-bench-")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(tmp)
	cfg := bench.SmokeConfig()
	cfg.TempDir = tmp
	rep, err := bench.Run(context.Background(), cfg, func(stage string) { fmt.Fprintln(os.Stderr, stage) })
	if err != nil {
		log.Fatal(err)
	}
	for _, m := range rep.Measures {
		fmt.Printf("%-44s %10.3f %-8s %-8s %s\n", m.Name, m.Value, m.Unit, m.Target, m.Status)
	}
	if rep.Failed() {
		fmt.Println("a target failed")
	}
}

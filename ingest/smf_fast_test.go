package ingest

import (
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/relshard/relshard/ingest/mutate"
)

// walkedEvent is what walkEvents records of one event.
type walkedEvent struct {
	track              int
	tick               int64
	kind               EventKind
	status, d1, d2, mt byte
	data               string
}

// walkEvents records every event of data and then the Reader's counters and error,
// reading runs of channel messages with channelRun, batch at most messages at a time,
// before each Next (as Parse does) when batch > 0, with Next only otherwise. Both
// ways must give the same record.
func walkEvents(data []byte, maxEvents, batch int) ([]walkedEvent, string) {
	var r Reader
	var evs []walkedEvent
	if err := r.Reset("x.mid", data, maxEvents); err != nil {
		return nil, fmt.Sprintf("reset: %v", err)
	}
	ev := r.Event()
	for r.NextTrack() {
		for {
			if batch > 0 {
				msgs := r.channelRun(make([]chanMsg, 0, batch))
				for _, m := range msgs {
					evs = append(evs, walkedEvent{r.Track(), m.tick, KindChannel, m.status, m.d1, m.d2, 0, ""})
				}
				if len(msgs) > 0 && msgs[len(msgs)-1].tick != r.Tick() {
					return nil, fmt.Sprintf("last message at tick %d, reader at %d", msgs[len(msgs)-1].tick, r.Tick())
				}
				if len(msgs) == batch {
					continue
				}
			}
			if !r.Next() {
				break
			}
			if ev.Tick != r.Tick() {
				return nil, fmt.Sprintf("event tick %d, reader tick %d", ev.Tick, r.Tick())
			}
			evs = append(evs, walkedEvent{r.Track(), ev.Tick, ev.Kind, ev.Status, ev.Data1, ev.Data2, ev.Meta, string(ev.Data)})
		}
		evs = append(evs, walkedEvent{track: r.Track(), tick: r.Tick()}) // end of track
	}
	return evs, fmt.Sprintf("running-after-meta %d slack %d/%d missing-eot %d skipped %d trailing %d err %v",
		r.RunningAfterMeta, r.SlackBytes, r.SlackTracks, r.MissingEOT, r.SkippedChunks, r.TrailingBytes(), r.Err())
}

// TestChannelRunMatchesNext: the fast path of Parse reads the same events as Next,
// leaves the same counters and meets the same errors (also at an event cap of 50, so
// the cap is hit), on the testdata fixtures, Debian's openttd-openmsx files when
// installed, and every damaged variant the mutate package makes of the fixtures and
// of two of those files.
func TestChannelRunMatchesNext(t *testing.T) {
	var bases []mutate.Base
	for name, data := range fixtures() {
		bases = append(bases, mutate.Base{Name: name, Data: data})
	}
	slices.SortFunc(bases, func(a, b mutate.Base) int { return strings.Compare(a.Name, b.Name) })
	mutated := len(bases)
	for i, p := range openttdPaths() {
		data, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		bases = append(bases, mutate.Base{Name: filepath.Base(p), Data: data})
		if i < 2 {
			mutated++
		}
	}
	check := func(name string, data []byte) {
		t.Helper()
		for _, max := range []int{0, 50} {
			slow, slowEnd := walkEvents(data, max, 0)
			for _, batch := range []int{1, 3, 256} {
				fast, fastEnd := walkEvents(data, max, batch)
				if !slices.Equal(slow, fast) || slowEnd != fastEnd {
					i := 0
					for i < min(len(slow), len(fast)) && slow[i] == fast[i] {
						i++
					}
					t.Errorf("%s, event cap %d, batch %d: the fast path reads differently from event %d of %d/%d:\nNext only:       %+v %s\nwith channelRun: %+v %s",
						name, max, batch, i, len(slow), len(fast), slow[i:min(i+3, len(slow))], slowEnd, fast[i:min(i+3, len(fast))], fastEnd)
				}
			}
		}
	}
	for _, b := range bases {
		check(b.Name, b.Data)
	}
	for _, c := range mutate.Corpus(5, bases[:mutated]) {
		check(c.Name, c.Data)
	}
}

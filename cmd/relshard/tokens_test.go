package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gitlab.com/gomidi/midi/v2"
	"gitlab.com/gomidi/midi/v2/smf"

	"github.com/relshard/relshard/tokenize"
)

// tokTestFile writes a small MIDI file with gomidi (an independent writer): at
// 480 PPQ and the SMF 1.0 default 120 BPM, C4 for a quarter (500 ms) at velocity 96,
// then E4 for an eighth, and a bass drum on channel 10 (General MIDI 1).
func tokTestFile(t *testing.T) string {
	t.Helper()
	var tr, meta smf.Track
	meta.Add(0, smf.MetaMeter(4, 4))
	meta.Close(0)
	tr.Add(0, midi.NoteOn(0, 60, 96))
	tr.Add(0, midi.NoteOn(9, 36, 100))
	tr.Add(120, midi.NoteOff(9, 36))
	tr.Add(360, midi.NoteOff(0, 60))
	tr.Add(0, midi.NoteOn(0, 64, 96))
	tr.Add(240, midi.NoteOff(0, 64))
	tr.Close(0)
	s := smf.New()
	s.TimeFormat = smf.MetricTicks(480)
	s.Add(meta)
	s.Add(tr)
	var b bytes.Buffer
	if _, err := s.WriteTo(&b); err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(t.TempDir(), "two.mid")
	if err := os.WriteFile(p, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func runTok(t *testing.T, stdin string, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(args, &streams{In: strings.NewReader(stdin), Out: &out, Err: &errb})
	return code, out.String(), errb.String()
}

func TestTokensTable(t *testing.T) {
	f := tokTestFile(t)
	code, out, errOut := runTok(t, "", "tokens", f)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	lines := strings.Split(strings.TrimSpace(out), "\n")
	if !strings.Contains(lines[0], "performance encoding, 9 tokens, 2 of 3 notes encoded, time in ms") ||
		!strings.Contains(lines[1], "1 drum notes dropped") {
		t.Errorf("header:\n%s", strings.Join(lines[:2], "\n"))
	}
	var rows []string
	for _, l := range lines[3:] {
		rows = append(rows, strings.Join(strings.Fields(l), " "))
	}
	// Quarter at 120 BPM = 500 ms, eighth = 250 ms (SMF 1.0 default tempo); velocity
	// 96 falls in bin 24 of 32.
	want := []string{
		"0 1 begin 0 0 - -", "1 383 vel.24 0 0 - -", "2 63 on.60 0 0 60 0", "3 308 dt.500 500 500 - -",
		"4 191 off.60 500 500 60 0", "5 67 on.64 500 500 64 0", "6 283 dt.250 750 750 - -", "7 195 off.64 750 750 64 0",
		"8 2 end 750 750 - -",
	}
	if !slices.Equal(rows, want) {
		t.Errorf("rows\n got %q\nwant %q", rows, want)
	}
}

func TestTokensJSONDecodeRoundTrip(t *testing.T) {
	f := tokTestFile(t)
	for _, enc := range []string{"performance", "grid"} {
		code, out, errOut := runTok(t, "", "tokens", "--json", "--fidelity", "--drums", "keep", "--encoding", enc, f)
		if code != exitOK {
			t.Fatalf("%s: exit %d: %s", enc, code, errOut)
		}
		var top map[string]json.RawMessage
		if err := json.Unmarshal([]byte(out), &top); err != nil {
			t.Fatal(err)
		}
		wantKeys := []string{"config", "encoding", "fidelity", "file", "piece", "pieces", "stats", "time_unit", "tokens", "vocab_size"}
		if got := slices.Sorted(mapKeysOf2(top)); !slices.Equal(got, wantKeys) {
			t.Errorf("%s: keys %v, want %v", enc, got, wantKeys)
		}
		var fid tokenize.Fidelity
		if err := json.Unmarshal(top["fidelity"], &fid); err != nil {
			t.Fatal(err)
		}
		if fid.Notes != 3 || fid.Matched != 3 || fid.WithinBound != 3 {
			t.Errorf("%s: fidelity %+v", enc, fid)
		}
		in := filepath.Join(t.TempDir(), "t.json")
		os.WriteFile(in, []byte(out), 0o644)
		mid := filepath.Join(t.TempDir(), "out.mid")
		code, out, errOut = runTok(t, "", "decode", in, "-o", mid)
		if code != exitOK || !strings.Contains(out, "3 notes") {
			t.Fatalf("%s: decode: exit %d: %s%s", enc, code, out, errOut)
		}
		// The decoded file, read by gomidi: the same keys, drums on channel 10.
		s, err := smf.ReadFile(mid)
		if err != nil {
			t.Fatal(err)
		}
		var keys []string
		for _, tr := range s.Tracks {
			for _, ev := range tr {
				var ch, key, vel uint8
				if ev.Message.GetNoteStart(&ch, &key, &vel) {
					keys = append(keys, midi.Note(key).String()+"/"+string(rune('0'+ch)))
				}
			}
		}
		slices.Sort(keys)
		if w := []string{"C3/9", "C5/0", "E5/0"}; !slices.Equal(keys, w) {
			// gomidi names key 60 C5 and key 36 C3.
			t.Errorf("%s: decoded notes %v, want %v", enc, keys, w)
		}
	}
}

func TestDecodeInputs(t *testing.T) {
	dir := t.TempDir()
	// A bare id array on standard input: begin, vel.24, on.60, dt.500, off.60, end.
	code, out, errOut := runTok(t, "[1, 383, 63, 308, 191, 2]", "decode", "-", "-o", "-")
	if code != exitOK || !strings.HasPrefix(out, "MThd") || !strings.Contains(errOut, "1 notes") {
		t.Errorf("ids on stdin: exit %d, %q, %q", code, out[:min(len(out), 8)], errOut)
	}
	bad := []struct {
		name, json, args, want string
		code                   int
	}{
		{"unknown id", "[1, 9999]", "", "token 1 (?9999): id outside the vocabulary", exitFailed},
		{"label mismatch", `[{"id": 63, "label": "on.61"}]`, "", `id 63 is "on.60"`, exitFailed},
		{"grid stream error", "[1, 86]", "--encoding grid", "position before any bar", exitFailed},
		{"not JSON", "{", "", "unexpected end of JSON input", exitFailed},
		{"object without tokens", `{"file": "x"}`, "", `no "tokens" array`, exitFailed},
		{"bad encoding", "[1]", "--encoding remi", `encoding "remi"`, exitUsage},
		{"bad config in the file", `{"config": {"encoding": "x"}, "tokens": [1]}`, "", `config: tokenize config: encoding "x"`, exitFailed},
	}
	for _, tc := range bad {
		p := filepath.Join(dir, strings.ReplaceAll(tc.name, " ", "_")+".json")
		os.WriteFile(p, []byte(tc.json), 0o644)
		args := append([]string{"decode", p, "-o", filepath.Join(dir, "o.mid")}, strings.Fields(tc.args)...)
		code, _, errOut := runTok(t, "", args...)
		if code != tc.code || !strings.Contains(errOut, tc.want) {
			t.Errorf("%s: exit %d, %q; want exit %d and %q", tc.name, code, errOut, tc.code, tc.want)
		}
	}
	if code, _, errOut := runTok(t, "", "decode", "x.json"); code != exitUsage || !strings.Contains(errOut, "-o") {
		t.Errorf("no -o: exit %d %q", code, errOut)
	}
}

func TestVocabCommand(t *testing.T) {
	code, out, errOut := runTok(t, "", "vocab")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	var v struct {
		Size   int `json:"size"`
		Tokens []struct {
			ID    int    `json:"id"`
			Label string `json:"label"`
			Kind  string `json:"kind"`
			Value int    `json:"value"`
		} `json:"tokens"`
	}
	if err := json.Unmarshal([]byte(out), &v); err != nil {
		t.Fatal(err)
	}
	// Huang et al. 2018: 388 performance events, plus our 3 special tokens.
	if v.Size != 391 || len(v.Tokens) != 391 || v.Tokens[0].Label != "pad" || v.Tokens[3].Kind != "note_on" {
		t.Errorf("size %d, %d tokens, first %+v", v.Size, len(v.Tokens), v.Tokens[:4])
	}
	code, out, _ = runTok(t, "", "vocab", "--encoding", "grid", "--drums", "keep")
	if code != exitOK || !strings.Contains(out, `"inst.drums"`) || !strings.Contains(out, `"meter.6/8"`) {
		t.Errorf("grid vocab: exit %d", code)
	}
	cfgFile := filepath.Join(t.TempDir(), "c.yaml")
	os.WriteFile(cfgFile, []byte("tokens:\n  encoding: performance\n  shift_ms: 8\n  max_shift_ms: 1000\n"), 0o644)
	code, out, errOut = runTok(t, "", "vocab", "--config", cfgFile)
	if code != exitOK || !strings.Contains(out, `"size": 416`) { // 3 + 128 + 128 + 125 + 32
		t.Errorf("config file: exit %d %s %.200s", code, errOut, out)
	}
	if code, _, errOut := runTok(t, "", "vocab", "--encoding", "x"); code != exitUsage || !strings.Contains(errOut, `encoding "x"`) {
		t.Errorf("bad encoding: exit %d %q", code, errOut)
	}
}

func TestTokensErrors(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "bad.mid")
	os.WriteFile(bad, []byte("MThd\x00\x00\x00\x06\x00"), 0o644)
	if code, _, errOut := runTok(t, "", "tokens", bad); code != exitFailed || !strings.Contains(errOut, "bad.mid") {
		t.Errorf("bad file: exit %d %q", code, errOut)
	}
	if code, _, errOut := runTok(t, "", "tokens", tokTestFile(t), "--piece", "3"); code != exitUsage || !strings.Contains(errOut, "1 piece") {
		t.Errorf("piece out of range: exit %d %q", code, errOut)
	}
	if code, _, _ := runTok(t, "", "tokens"); code != exitUsage {
		t.Errorf("no file: exit %d", code)
	}
}

func mapKeysOf2[V any](m map[string]V) func(func(string) bool) {
	return func(yield func(string) bool) {
		for k := range m {
			if !yield(k) {
				return
			}
		}
	}
}

package demodata

import (
	"bytes"
	"encoding/json"
	"fmt"
	"regexp"
	"slices"
	"strings"
	"testing"
	"unicode/utf8"
)

// These mirror the generator's limits and output (gen.go prints the counts);
// re-running the generator after a change means updating them here.
const (
	minWords  = 20
	maxWords  = 120
	exactDups = 20
	maxBytes  = 600 * 1024
)

var wantPoolTopics = map[string]int{
	"baking":                73,
	"dispatch":              85,
	"dispatch+engine":       2,
	"dispatch+weather":      2,
	"engine":                89,
	"engine+weather":        2,
	"firstaid":              66,
	"firstaid+knots":        2,
	"garden":                73,
	"garden+weather":        2,
	"knots":                 61,
	"paperwork":             69,
	"paperwork+baking":      3,
	"paperwork+spreadsheet": 2,
	"spreadsheet":           74,
	"spreadsheet+dispatch":  2,
	"stories":               62,
	"stories+knots":         2,
	"weather":               82,
}

// leftoverSlot matches a generator placeholder such as {i} or {C} that was
// never filled in; no real row text uses braces that way.
var leftoverSlot = regexp.MustCompile(`\{[A-Za-z0-9]{1,4}\}`)

var baseTopics = []string{"baking", "dispatch", "engine", "firstaid", "garden", "knots", "paperwork", "spreadsheet", "stories", "weather"}

type row struct {
	ID          string `json:"id"`
	Instruction string `json:"instruction"`
	Input       string `json:"input"`
	Output      string `json:"output"`
	Topic       string `json:"topic"`
}

func (r row) key() string { return r.Instruction + "\x00" + r.Input + "\x00" + r.Output }

// parse checks the file-level shape and decodes every line strictly.
func parse(t *testing.T, name string, data []byte) []row {
	t.Helper()
	if !utf8.Valid(data) {
		t.Fatalf("%s: not valid UTF-8", name)
	}
	if !bytes.HasSuffix(data, []byte("\n")) {
		t.Fatalf("%s: last line has no newline", name)
	}
	var rows []row
	for i, line := range bytes.Split(bytes.TrimSuffix(data, []byte("\n")), []byte("\n")) {
		var obj map[string]json.RawMessage
		if err := json.Unmarshal(line, &obj); err != nil {
			t.Fatalf("%s:%d: not a JSON object: %v", name, i+1, err)
		}
		keys := make([]string, 0, len(obj))
		for k := range obj {
			keys = append(keys, k)
		}
		slices.Sort(keys)
		if want := []string{"id", "input", "instruction", "output", "topic"}; !slices.Equal(keys, want) {
			t.Fatalf("%s:%d: fields %v, want %v", name, i+1, keys, want)
		}
		var r row
		dec := json.NewDecoder(bytes.NewReader(line))
		dec.DisallowUnknownFields()
		if err := dec.Decode(&r); err != nil {
			t.Fatalf("%s:%d: %v", name, i+1, err)
		}
		rows = append(rows, r)
	}
	return rows
}

func TestRows(t *testing.T) {
	tests := []struct {
		name     string
		data     []byte
		idFormat string
		min, max int
	}{
		{"pool.jsonl", Pool(), "pool-%04d", 600, 900},
		{"target.jsonl", Target(), "target-%02d", 30, 50},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			rows := parse(t, tt.name, tt.data)
			if len(rows) < tt.min || len(rows) > tt.max {
				t.Errorf("%d rows, want %d to %d", len(rows), tt.min, tt.max)
			}
			ids := map[string]bool{}
			for i, r := range rows {
				if ids[r.ID] {
					t.Errorf("line %d: duplicate id %q", i+1, r.ID)
				}
				ids[r.ID] = true
				if want := fmt.Sprintf(tt.idFormat, i+1); r.ID != want {
					t.Errorf("line %d: id %q, want %q", i+1, r.ID, want)
				}
				if strings.TrimSpace(r.Instruction) == "" || strings.TrimSpace(r.Output) == "" {
					t.Errorf("%s: empty instruction or output", r.ID)
				}
				if n := len(strings.Fields(r.Instruction + " " + r.Input + " " + r.Output)); n < minWords || n > maxWords {
					t.Errorf("%s: %d words, want %d to %d", r.ID, n, minWords, maxWords)
				}
				if slot := leftoverSlot.FindString(r.key()); slot != "" {
					t.Errorf("%s: unfilled template slot %s", r.ID, slot)
				}
				for _, part := range strings.Split(r.Topic, "+") {
					if !slices.Contains(baseTopics, part) {
						t.Errorf("%s: unknown topic %q", r.ID, r.Topic)
					}
				}
			}
		})
	}
}

func TestPoolTopics(t *testing.T) {
	rows := parse(t, "pool.jsonl", Pool())
	got := map[string]int{}
	for _, r := range rows {
		got[r.Topic]++
	}
	for topic, n := range wantPoolTopics {
		if got[topic] != n {
			t.Errorf("topic %q: %d rows, want %d", topic, got[topic], n)
		}
	}
	for topic, n := range got {
		if _, ok := wantPoolTopics[topic]; !ok {
			t.Errorf("unexpected topic %q (%d rows)", topic, n)
		}
	}
	// The demo's precision figure depends on the target topic being a
	// clear minority of the pool, about one row in nine.
	share := float64(got[TargetTopic]) / float64(len(rows))
	if share < 0.08 || share > 0.15 {
		t.Errorf("target topic is %.3f of the pool, want 0.08 to 0.15", share)
	}
	if n := len(baseTopics); n < 8 || n > 10 {
		t.Errorf("%d base topics, want 8 to 10", n)
	}
}

func TestPoolDuplicates(t *testing.T) {
	rows := parse(t, "pool.jsonl", Pool())
	seen := map[string]bool{}
	dups := 0
	for _, r := range rows {
		if seen[r.key()] {
			dups++
		}
		seen[r.key()] = true
	}
	if dups != exactDups {
		t.Errorf("%d exact duplicate rows, want %d", dups, exactDups)
	}
}

func TestTargetIsFresh(t *testing.T) {
	pool := parse(t, "pool.jsonl", Pool())
	target := parse(t, "target.jsonl", Target())
	keys, outs := map[string]string{}, map[string]string{}
	for _, r := range pool {
		keys[r.key()] = r.ID
		outs[r.Output] = r.ID
	}
	for _, r := range target {
		if r.Topic != TargetTopic {
			t.Errorf("%s: topic %q, want %q", r.ID, r.Topic, TargetTopic)
		}
		if id, ok := keys[r.key()]; ok {
			t.Errorf("%s copies %s", r.ID, id)
		}
		if id, ok := outs[r.Output]; ok {
			t.Errorf("%s has the same output as %s", r.ID, id)
		}
	}
}

func TestSize(t *testing.T) {
	if n := len(Pool()) + len(Target()); n >= maxBytes {
		t.Errorf("pool and target are %d bytes together, want under %d", n, maxBytes)
	}
}

func TestCallersCannotChangeData(t *testing.T) {
	for name, f := range map[string]func() []byte{"Pool": Pool, "Target": Target} {
		b := f()
		first := b[0]
		b[0] = 'X'
		if got := f()[0]; got != first {
			t.Errorf("%s: a caller's write changed the embedded data", name)
		}
	}
}

func TestScenario(t *testing.T) {
	s := strings.TrimSpace(Scenario)
	if !strings.HasSuffix(s, ".") {
		t.Fatalf("Scenario does not end a sentence: %q", s)
	}
	if n := strings.Count(s, ". ") + 1; n < 2 || n > 3 {
		t.Errorf("Scenario has %d sentences, want 2 or 3", n)
	}
}

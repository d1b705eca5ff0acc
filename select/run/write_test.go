package run

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"testing"
)

func TestAppendJSONString(t *testing.T) {
	for _, s := range []string{"", "pool-0001", "a/b:12", `q"uote`, `back\slash`, "tab\there", "naïve", "<&>", "\x7f", "\xff"} {
		got := AppendJSONString(nil, s)
		want, _ := json.Marshal(s)
		if string(got) != string(want) {
			t.Errorf("%q: got %s, want %s (encoding/json)", s, got, want)
		}
	}
}

// scores.jsonl is formatted a batch of rows at a time on every core and written in order: any
// batch size gives the bytes of one batch, which TestOneSetUnchanged ties to the sequential writer
// of before. Internal property: no reference values.
func TestScoresBatchesKeepBytes(t *testing.T) {
	dir, idx, target := demo(t)
	var want []byte
	for _, batch := range []int{1 << 30, 1, 7, 300} {
		o := demoOptions(idx, target, filepath.Join(dir, fmt.Sprintf("run-%d", batch)))
		o.scoreBatch = batch
		if _, err := Pick(context.Background(), o); err != nil {
			t.Fatal(err)
		}
		got, err := os.ReadFile(filepath.Join(o.Out, ScoresFile))
		if err != nil {
			t.Fatal(err)
		}
		if want == nil {
			want = got
			if bytes.Count(got, []byte("\n")) < 2*300 {
				t.Fatalf("the demo pool has %d rows: too few for batches of 300", bytes.Count(got, []byte("\n")))
			}
			continue
		}
		if !bytes.Equal(got, want) {
			t.Errorf("batches of %d rows: scores.jsonl differs from one batch", batch)
		}
	}
}

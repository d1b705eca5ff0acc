package run

import (
	"bufio"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sluice/index"
	"sluice/score"
)

// The kept rows in one schema: each row's text read through the first alternative it has, with
// its source, id, score and rank, the same rows in the same order as the rows kept as they stand.
func TestKeptFormats(t *testing.T) {
	dir := t.TempDir()
	pool := filepath.Join(dir, "pool.jsonl")
	rows := `{"id":"a","prompt":"Which river floods?","completion":"The river floods each spring."}
{"id":"b","messages":[{"role":"user","content":"Does the river flood?"},{"role":"assistant","content":"Yes, each spring."}]}
{"id":"c","text":"The river floods in spring after the snow melts."}
{"id":"d","text":"Cats sleep most of the day."}
`
	target := filepath.Join(dir, "target.jsonl")
	os.WriteFile(pool, []byte(rows), 0o644)
	os.WriteFile(target, []byte(`{"text":"when does the river flood in spring"}`+"\n"), 0o644)
	idx := filepath.Join(dir, "idx")
	if _, err := index.Build(context.Background(), idx, []string{pool}, index.Options{ID: "id", Text: "prompt,completion|messages[].content|text"}); err != nil {
		t.Fatal(err)
	}
	pick := func(format string) []map[string]any {
		out := filepath.Join(dir, "run-"+format)
		opt := Options{Index: idx, Target: target, TargetText: "text", OtherText: true, Params: score.DefaultParams(), Budget: 1e18, BudgetHow: "test",
			TrainParams: 1e6, Epochs: 1, Out: out, Version: "test", KeptFormat: format, Guards: Guards{KeepDuplicates: true}}
		if _, err := Pick(context.Background(), opt); err != nil {
			t.Fatalf("%s: %v", format, err)
		}
		f, err := os.Open(filepath.Join(out, KeptName("none")))
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		var got []map[string]any
		sc := bufio.NewScanner(f)
		for sc.Scan() {
			var m map[string]any
			if err := json.Unmarshal(sc.Bytes(), &m); err != nil {
				t.Fatalf("%s: %q: %v", format, sc.Text(), err)
			}
			got = append(got, m)
		}
		return got
	}
	asIs := pick(KeptRows)
	text, chat := pick(KeptText), pick(KeptChat)
	if len(asIs) != 3 || len(text) != 3 || len(chat) != 3 {
		t.Fatalf("kept %d, %d, %d rows; want the 3 about the river", len(asIs), len(text), len(chat))
	}
	wantText := map[string]string{
		"a": "Which river floods?\n\nThe river floods each spring.",
		"b": "Does the river flood?\n\nYes, each spring.",
		"c": "The river floods in spring after the snow melts.",
	}
	wantChat := map[string]string{
		"a": "user:Which river floods?|assistant:The river floods each spring.",
		"b": "user:Does the river flood?|assistant:Yes, each spring.",
		"c": "assistant:The river floods in spring after the snow melts.",
	}
	for i := range asIs {
		id := asIs[i]["id"].(string)
		if text[i]["id"] != id || chat[i]["id"] != id {
			t.Errorf("row %d: ids %v, %v, %v differ", i, id, text[i]["id"], chat[i]["id"])
		}
		if text[i]["text"] != wantText[id] || text[i]["source"] != pool || text[i]["rank"] == nil || text[i]["score"] == nil {
			t.Errorf("%s as text: %v", id, text[i])
		}
		var turns []string
		for _, m := range chat[i]["messages"].([]any) {
			mm := m.(map[string]any)
			turns = append(turns, mm["role"].(string)+":"+mm["content"].(string))
		}
		if strings.Join(turns, "|") != wantChat[id] {
			t.Errorf("%s as chat: %q, want %q", id, strings.Join(turns, "|"), wantChat[id])
		}
	}
}

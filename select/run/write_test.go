package run

import (
	"encoding/json"
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

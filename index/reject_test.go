package index

import (
	"strconv"
	"strings"
	"testing"
)

func TestQuoteRaw(t *testing.T) {
	long := strings.Repeat("a", MaxRawBytes-1) + "é" + "tail" // é straddles the cut
	for _, tc := range []struct {
		in, want string
		escaped  bool
	}{
		{`{"a":1`, `{"a":1`, false},
		{"nul \x00 is valid UTF-8", "nul \x00 is valid UTF-8", false},
		{"bad \xff byte \"q\"", `bad \xff byte \"q\"`, true},
		{long, strings.Repeat("a", MaxRawBytes-1), false},
	} {
		raw, esc := quoteRaw([]byte(tc.in))
		if raw != tc.want || esc != tc.escaped {
			t.Errorf("quoteRaw(%.40q) = %.40q, %v; want %.40q, %v", tc.in, raw, esc, tc.want, tc.escaped)
		}
		if esc {
			if back, err := strconv.Unquote(`"` + raw + `"`); err != nil || back != tc.in {
				t.Errorf("escaped %q reads back as %q, %v", raw, back, err)
			}
		}
	}
}

package dedup

import (
	"testing"
	"unicode"
)

// TestFoldMatchesCaseFolding checks fold against Unicode's simple case folding for every code
// point: testdata/casefold.json, the C and S entries of CaseFolding.txt from Debian's
// unicode-data, extracted by testdata/casefold.py.
func TestFoldMatchesCaseFolding(t *testing.T) {
	var ref struct {
		Version string    `json:"version"`
		Fold    [][2]rune `json:"fold"`
	}
	readJSON(t, "casefold.json", &ref)
	if want := "CaseFolding-" + unicode.Version + ".txt"; ref.Version != want {
		t.Skipf("casefold.json is from %s, Go's tables are Unicode %s: rerun testdata/casefold.py with a matching unicode-data", ref.Version, unicode.Version)
	}
	want := make(map[rune]rune, len(ref.Fold))
	for _, f := range ref.Fold {
		want[f[0]] = f[1]
	}
	bad := 0
	for r := rune(0); r <= unicode.MaxRune; r++ {
		if 0xD800 <= r && r < 0xE000 {
			continue
		}
		w, ok := want[r]
		if !ok {
			w = r
		}
		if got := fold(r); got != w {
			if bad++; bad <= 20 {
				t.Errorf("fold(U+%04X) = U+%04X, want U+%04X", r, got, w)
			}
		}
	}
	if bad > 20 {
		t.Errorf("%d code points in all", bad)
	}
}

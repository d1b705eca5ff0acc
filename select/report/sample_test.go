package report

import (
	"errors"
	"fmt"
	"strings"
	"testing"
	"unicode/utf8"

	"sluice/index/jsonl"
	"sluice/select/run"
)

func rowScore(row int) run.Score { return run.Score{Row: row} }

func TestShortenMiddle(t *testing.T) {
	for _, tc := range []struct {
		in   string
		n    int
		want string
	}{
		{"pool.jsonl", 34, "pool.jsonl"},
		{"abcdefghij", 10, "abcdefghij"},
		{"abcdefghijk", 10, "abcd…ghijk"},
		{"/data/pools/2024/shard-00017.jsonl.zst", 20, "/data/poo….jsonl.zst"},
		// Runes, not bytes: no character is split, and the result counts n runes.
		{"données/été/über-straße/éèêë.jsonl", 15, "données…ë.jsonl"},
		{"日本語のファイル名はとても長いです.jsonl", 9, "日本語の…sonl"},
		{"ab", 1, "…"},
	} {
		got := shortenMiddle(tc.in, tc.n)
		if got != tc.want {
			t.Errorf("shortenMiddle(%q, %d) = %q, want %q", tc.in, tc.n, got, tc.want)
		}
		if !utf8.ValidString(got) || utf8.RuneCountInString(got) > max(tc.n, 1) {
			t.Errorf("shortenMiddle(%q, %d) = %q: not %d valid runes", tc.in, tc.n, got, tc.n)
		}
	}
}

func TestRowTexter(t *testing.T) {
	long := strings.Repeat("é", sampleBlockBytes) // two bytes each: cut at a rune
	for _, tc := range []struct {
		spec, line string
		want       []textBlock
		more       string
		err        error
	}{
		{spec: "instruction,input,output", line: `{"instruction":"Say hi.","input":"","output":"Hi!\n  there","id":7}`,
			want: []textBlock{{Label: "instruction", Text: "Say hi."}, {Label: "output", Text: "Hi!\n  there"}}},
		{spec: "messages[].content", line: `{"messages":[{"role":"user","content":"a <b>"},{"content":"  "},{"content":"c\u0001"}]}`,
			want: []textBlock{{Label: "messages[].content (1 of 2)", Text: "a <b>"}, {Label: "messages[].content (2 of 2)", Text: "c\uFFFD"}}},
		{spec: `a\,b, c.d`, line: `{"a,b":"x","c":{"d":"y"}}`,
			want: []textBlock{{Label: `a\,b`, Text: "x"}, {Label: "c.d", Text: "y"}}},
		{spec: "text", line: `{"text":"` + long + `"}`,
			want: []textBlock{{Label: "text", Text: long[:sampleBlockBytes], More: fmt.Sprintf("%d more characters", sampleBlockBytes/2)}}},
		{spec: "t[]", line: `{"t":["1","2","3","4","5","6","7","8","9","10"]}`, more: "2 more text parts"},
		{spec: "text", line: `{"text":`, err: jsonl.ErrNotJSON},
		{spec: "text", line: `{"text":3}`, err: jsonl.ErrBadText},
		{spec: "prompt,completion", line: `{"other":"x"}`, err: errNoText},
	} {
		tx, err := newRowTexter(tc.spec)
		if err != nil {
			t.Fatalf("%s: %v", tc.spec, err)
		}
		got, more, err := tx.blocks([]byte(tc.line))
		if !errors.Is(err, tc.err) {
			t.Errorf("%s %s: error %v, want %v", tc.spec, tc.line, err, tc.err)
			continue
		}
		if more != tc.more {
			t.Errorf("%s: more %q, want %q", tc.spec, more, tc.more)
		}
		if tc.want != nil && fmt.Sprint(got) != fmt.Sprint(tc.want) {
			t.Errorf("%s %s:\n got %q\nwant %q", tc.spec, tc.line, got, tc.want)
		}
	}
	if _, err := newRowTexter("a,,b"); !errors.Is(err, jsonl.ErrBadSpec) {
		t.Errorf("a bad spec: %v", err)
	}
}

func TestReservoir(t *testing.T) {
	line := func(i int) []byte { return []byte(fmt.Sprintf(`{"id":"r%d","score":1,"rank":%d,"kept":true}`, i, i+1)) }
	draw := func(seed uint64, n, k int) []int {
		r := newReservoir(k, seed)
		for i := 0; i < n; i++ {
			if err := r.offer(i, i+1, line(i)); err != nil {
				t.Fatal(err)
			}
		}
		var rows []int
		for _, sr := range r.pick(k) {
			rows = append(rows, sr.score.Row)
		}
		return rows
	}
	a, b := draw(sampleSeed, 1000, 5), draw(sampleSeed, 1000, 5)
	if fmt.Sprint(a) != fmt.Sprint(b) || len(a) != 5 {
		t.Errorf("the same seed drew %v and %v", a, b)
	}
	// Every row is as likely as any other: over many seeds each of 20 rows is drawn about
	// draws*k/n times (a binomial with mean 1000, sd about 27).
	const n, k, seeds = 20, 5, 4000
	counts := make([]int, n)
	for s := uint64(0); s < seeds; s++ {
		for _, row := range draw(s, n, k) {
			counts[row]++
		}
	}
	for row, c := range counts {
		if c < 880 || c > 1120 {
			t.Errorf("row %d drawn %d times in %d draws of %d of %d, want about %d", row, c, seeds, k, n, seeds*k/n)
		}
	}
	// Rows shown elsewhere are left out, and the rest still fill the sample.
	r := newReservoir(15, sampleSeed)
	for i := 0; i < 30; i++ {
		r.offer(i, i+1, line(i))
	}
	shown := []sampleRow{{score: rowScore(r.rows[0].score.Row)}, {score: rowScore(r.rows[1].score.Row)}}
	got := r.pick(5, shown)
	if len(got) != 5 {
		t.Fatalf("picked %d rows", len(got))
	}
	for i, sr := range got {
		if sr.score.Row == shown[0].score.Row || sr.score.Row == shown[1].score.Row {
			t.Errorf("row %d is shown elsewhere", sr.score.Row)
		}
		if i > 0 && sr.rank <= got[i-1].rank {
			t.Errorf("not in rank order: %v", got)
		}
	}
}

package index

import (
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// A cursor read in stretches of random length gives each term's postings exactly as Postings does
// (which reads the mapping), through windows of the default size and through windows so small that
// a posting's varints are cut at nearly every read. The property is internal, so no reference
// values are involved.
func TestCursorMatchesPostings(t *testing.T) {
	dir, _ := build(t, testPool(t, 3000), Options{Text: "prompt,completion"})
	ix, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	ix.resident = false // read as an index past residentMax is
	for _, window := range []int{0, 1, 21, 64} {
		ix.window = window
		cursorMatchesPostings(t, ix)
	}
}

func cursorMatchesPostings(t *testing.T, ix *Index) {
	t.Helper()
	rng := rand.New(rand.NewPCG(5, 6))
	n := ix.NumRows()
	var terms []string
	ix.lex.each(func(t []byte) { terms = append(terms, string(t)) })
	for _, term := range terms {
		wantRows, wantTFs, err := ix.Postings(term, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		c := ix.NewCursor(term)
		var rows, tfs []uint32
		for end := 0; end <= n; end += rng.IntN(400) {
			before := len(rows)
			if rows, tfs, err = c.Next(end, rows, tfs); err != nil {
				t.Fatal(err)
			}
			for _, r := range rows[before:] {
				if int(r) >= end {
					t.Fatalf("%q: row %d handed out before end %d", term, r, end)
				}
			}
		}
		if rows, tfs, err = c.Next(n, rows, tfs); err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(rows, wantRows) || !slices.Equal(tfs, wantTFs) {
			t.Fatalf("%q: cursor gave %d postings, Postings %d, or they differ", term, len(rows), len(wantRows))
		}
	}
	if rows, _, err := ix.NewCursor("no-such-term").Next(n, nil, nil); err != nil || len(rows) != 0 {
		t.Errorf("absent term: %v, %v", rows, err)
	}
}

// Postings released in the middle of a cursor's reading, and again after, are read as before, and
// so are the rows' records, norms, clusters and ids, released whole and behind passes over the
// rows: a release gives up pages, never bytes. Internal property: no reference values.
func TestReleasePagesKeepsThem(t *testing.T) {
	dir, _ := build(t, testPool(t, 3000), Options{Text: "prompt,completion", ID: "id"})
	ix, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	if !ix.resident {
		t.Fatalf("an index of %d rows is not left resident", ix.NumRows())
	}
	ix.resident = false // released and read alone, as an index past residentMax is
	var terms []string
	ix.lex.each(func(t []byte) { terms = append(terms, string(t)) })
	n := ix.NumRows()
	type rowOf struct {
		len, first int
		id         string
		norm       float64
	}
	before := make([]rowOf, n)
	for r := range n {
		f, _ := ix.DupFirst(r)
		before[r] = rowOf{ix.RowLen(r), f, ix.RowID(r), ix.RowNorm(r)}
	}
	for _, term := range terms {
		wantRows, wantTFs, err := ix.Postings(term, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		c := ix.NewCursor(term)
		rows, tfs, err := c.Next(n/2, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		ix.ReleasePages()
		if rows, tfs, err = c.Next(n, rows, tfs); err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(rows, wantRows) || !slices.Equal(tfs, wantTFs) {
			t.Fatalf("%q: released midway, a cursor gave %d postings of %d, or they differ", term, len(rows), len(wantRows))
		}
	}
	ix.ReleasePages()
	if ix.idOffsets() != nil || ix.idOff == nil || ix.dups == nil {
		t.Fatal("the test index has no ids or clusters: their release is not tried")
	}
	for _, span := range [][2]int{{0, n / 2}, {n / 2, n}, {0, 3}, {n - 5, n + 5}, {-1, 2}} {
		ix.ReleaseRows(span[0], span[1]) // passes, and stretches beyond the rows
	}
	for r := range n {
		f, _ := ix.DupFirst(r)
		if got := (rowOf{ix.RowLen(r), f, ix.RowID(r), ix.RowNorm(r)}); got != before[r] {
			t.Fatalf("row %d after a release: %+v, want %+v", r, got, before[r])
		}
		if got := string(ix.AppendRowIDRead([]byte("x"), r)); got != "x"+before[r].id {
			t.Fatalf("row %d: AppendRowIDRead %q, want %q", r, got, "x"+before[r].id)
		}
		// A record read alone says what the mapping says.
		tok, ok, tb := ix.RowTokens(r)
		if rt, rok, rtb, err := ix.ReadRowTokens(r); err != nil || rt != tok || rok != ok || rtb != tb || tb <= 0 {
			t.Fatalf("row %d: ReadRowTokens %d %v %d %v, RowTokens %d %v %d", r, rt, rok, rtb, err, tok, ok, tb)
		}
	}
	for _, term := range terms[:min(len(terms), 50)] {
		if _, _, err := ix.Postings(term, nil, nil); err != nil {
			t.Fatalf("%q after a release: %v", term, err)
		}
	}
}

// Ids read alone are the ids the mapping gives, long ones (past the read) among them. Internal
// property: no reference values.
func TestAppendRowIDRead(t *testing.T) {
	var b strings.Builder
	for i := range 40 {
		fmt.Fprintf(&b, "{\"id\":%q,\"text\":\"row %d of the harbour ledger\"}\n", strings.Repeat("k", 1+i*i*2)+fmt.Sprint(i), i)
	}
	pool := filepath.Join(t.TempDir(), "pool.jsonl")
	if err := os.WriteFile(pool, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	dir, _ := build(t, pool, Options{ID: "id"})
	ix, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer ix.Close()
	ix.resident = false // read alone, as an index past residentMax is
	for r := range ix.NumRows() {
		if got, want := string(ix.AppendRowIDRead(nil, r)), ix.RowID(r); got != want {
			t.Fatalf("row %d: read alone %d bytes, the mapping %d", r, len(got), len(want))
		}
	}
}

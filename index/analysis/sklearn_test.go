package analysis

import (
	"bufio"
	"encoding/json"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strings"
	"testing"
	"unicode"
	"unicode/utf8"

	"github.com/blevesearch/bleve/v2/analysis/analyzer/custom"
	"github.com/blevesearch/bleve/v2/analysis/lang/en"
	"github.com/blevesearch/bleve/v2/analysis/token/lowercase"
	bleveunicode "github.com/blevesearch/bleve/v2/analysis/tokenizer/unicode"
	"github.com/blevesearch/bleve/v2/registry"
)

// sklearnToken is the token pattern (?u)\b\w\w+\b in Go's syntax, whose \w
// is ASCII only: a maximal run of two or more letters, numbers or '_'.
// Leftmost-first matching of the greedy run finds the same runs as the
// \b-bounded pattern: a match can only start where a run starts.
var sklearnToken = regexp.MustCompile(`[\p{L}\p{N}_]{2,}`)

// sklearnRef is the sklearn chain's definition, written as directly as
// possible (see sklearn.go): decode the text as Python would with
// errors='replace' (one U+FFFD per bad byte, which is no word character
// either way), lowercase it as str.lower() does, find the token pattern's
// matches, drop the stop words.
func sklearnRef(a *Analyzer, text []byte) []string {
	rs := []rune(string(text))
	var low []rune
	for i, r := range rs {
		switch r {
		case 'İ':
			low = append(low, 'i', 0x307)
		case 'Σ':
			low = append(low, refSigma(rs, i))
		default:
			low = append(low, unicode.ToLower(r))
		}
	}
	var terms []string
	for _, tok := range sklearnToken.FindAllString(string(low), -1) {
		if _, stop := a.stop[tok]; !stop {
			terms = append(terms, tok)
		}
	}
	return terms
}

// refSigma lowercases the Σ at rs[i] as CPython's handle_capital_sigma
// does (Objects/unicodeobject.c), over the decoded characters.
func refSigma(rs []rune, i int) rune {
	j := i - 1
	for j >= 0 && caseIgnorable(rs[j]) {
		j--
	}
	final := j >= 0 && cased(rs[j])
	if final {
		k := i + 1
		for k < len(rs) && caseIgnorable(rs[k]) {
			k++
		}
		final = k == len(rs) || !cased(rs[k])
	}
	if final {
		return 'ς'
	}
	return 'σ'
}

// refTerms returns the terms of a chain's reference path: bleve's analyzer
// for the bleve chains, sklearnRef for sklearn.
func refTerms(a *Analyzer, text []byte) []string {
	if a.sklearn {
		return sklearnRef(a, text)
	}
	return bleveTerms(a, text)
}

type sklearnFixture struct {
	Versions  map[string]string `json:"versions"`
	StopWords []string          `json:"stop_words"`
	Texts     []struct {
		Source string   `json:"source"`
		Text   string   `json:"text"`
		Tokens []string `json:"tokens"`
	} `json:"texts"`
}

func readSklearnFixture(t *testing.T) *sklearnFixture {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("testdata", "sklearn_tokens.json"))
	if err != nil {
		t.Fatal(err)
	}
	var f sklearnFixture
	if err := json.Unmarshal(b, &f); err != nil {
		t.Fatalf("testdata/sklearn_tokens.json: %v", err)
	}
	if len(f.Texts) == 0 {
		t.Fatal("testdata/sklearn_tokens.json holds no texts")
	}
	return &f
}

// TestSklearnMatchesScikitLearn compares the sklearn chain, its fast path
// and its definition, with the tokens of scikit-learn's own analyzer,
// CountVectorizer(stop_words='english').build_analyzer() from Debian's
// python3-sklearn 1.2.1, on outside texts: scikit-learn's documentation
// examples, Newton's Opticks and the Unicode test strings of Go's own
// tests (testdata/sklearn_tokens.py made the fixture).
func TestSklearnMatchesScikitLearn(t *testing.T) {
	f := readSklearnFixture(t)
	a := mustNew(t, sklearn)
	for _, tt := range f.Texts {
		want := tt.Tokens
		if len(want) == 0 {
			want = nil
		}
		if got := a.Terms([]byte(tt.Text)); !slices.Equal(got, want) {
			t.Errorf("%s: %q\nfast    %q\nsklearn %q", tt.Source, tt.Text, got, want)
		}
		if got := sklearnRef(a, []byte(tt.Text)); !slices.Equal(got, want) {
			t.Errorf("%s: %q\nref     %q\nsklearn %q", tt.Source, tt.Text, got, want)
		}
	}
	t.Logf("%d texts, scikit-learn %s, Unicode %s", len(f.Texts), f.Versions["sklearn"], f.Versions["unicode"])
}

// TestSklearnStopWords checks the copied list against scikit-learn's
// ENGLISH_STOP_WORDS as the fixture script read it.
func TestSklearnStopWords(t *testing.T) {
	f := readSklearnFixture(t)
	got := strings.Fields(sklearnStopWords)
	sort.Strings(got)
	if !slices.Equal(got, f.StopWords) {
		t.Errorf("sklearnStopWords differs from scikit-learn's ENGLISH_STOP_WORDS (%d and %d words)", len(got), len(f.StopWords))
	}
	if a := mustNew(t, sklearn); len(a.stop) != len(f.StopWords) {
		t.Errorf("sklearn stop map holds %d words, want %d", len(a.stop), len(f.StopWords))
	}
}

// TestSklearnUnicode checks, for every code point, the character
// properties the chain uses (word character, lowercase, the two sides of
// the Final_Sigma test) against what Debian's Python 3.11 does
// (testdata/sklearn_unicode.py made the fixture). Python's Unicode is
// 14.0 and Go's is unicode.Version; code points Python leaves unassigned
// are skipped and counted.
func TestSklearnUnicode(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("testdata", "sklearn_unicode.json"))
	if err != nil {
		t.Fatal(err)
	}
	var f struct {
		Versions                    map[string]string `json:"versions"`
		Assigned, Word, Skip, Cased [][2]rune
		Lower                       [][2]json.RawMessage // [code point, [its lowercase]]
	}
	if err := json.Unmarshal(b, &f); err != nil {
		t.Fatalf("testdata/sklearn_unicode.json: %v", err)
	}
	in := func(rs [][2]rune, r rune) bool {
		i := sort.Search(len(rs), func(i int) bool { return rs[i][1] >= r })
		return i < len(rs) && rs[i][0] <= r
	}
	lower := make(map[rune][]rune, len(f.Lower))
	for _, l := range f.Lower {
		var cp rune
		var low []rune
		if err := json.Unmarshal(l[0], &cp); err != nil {
			t.Fatalf("testdata/sklearn_unicode.json: lower: %v", err)
		}
		if err := json.Unmarshal(l[1], &low); err != nil {
			t.Fatalf("testdata/sklearn_unicode.json: lower of %U: %v", cp, err)
		}
		lower[cp] = low
	}
	skipped, fails := 0, 0
	fail := func(format string, args ...any) {
		if fails++; fails <= 20 {
			t.Errorf(format, args...)
		}
	}
	for r := rune(0); r <= unicode.MaxRune; r++ {
		if !utf8.ValidRune(r) {
			continue // surrogates: no valid UTF-8 decodes to them
		}
		if !in(f.Assigned, r) {
			skipped++
			continue
		}
		if got, want := sklearnWordRune(r), in(f.Word, r); got != want {
			fail("%U: word character %v, Python %v", r, got, want)
		}
		want, ok := lower[r]
		if !ok {
			want = []rune{r}
		}
		got := []rune{unicode.ToLower(r)}
		if r == 'İ' {
			got = []rune{'i', 0x307}
		}
		if !slices.Equal(got, want) {
			fail("%U: lowercase %U, Python %U", r, got, want)
		}
		skip, cs := in(f.Skip, r), in(f.Cased, r)
		if caseIgnorable(r) != skip || (!caseIgnorable(r) && cased(r)) != cs {
			fail("%U: case-ignorable %v, cased %v; Python skips %v, stops on cased %v", r, caseIgnorable(r), cased(r), skip, cs)
		}
	}
	t.Logf("Python %s, Unicode %s here and %s in Go; %d code points unassigned there, not compared",
		f.Versions["python"], f.Versions["unicode"], unicode.Version, skipped)
}

// TestSklearnShared compares the sklearn chain with scikit-learn on every
// text field of the shared corpora. A Go test cannot run Python, and the
// shared data may not be copied into the project, so this comparison is
// run by hand (about a minute):
//
//	/usr/bin/python3 index/analysis/testdata/sklearn_tokens.py --shared ../shared/data /tmp/sk.jsonl
//	SLUICE_SKLEARN_SHARED=/tmp/sk.jsonl go test -run TestSklearnShared ./index/analysis
func TestSklearnShared(t *testing.T) {
	name := os.Getenv("SLUICE_SKLEARN_SHARED")
	if name == "" {
		t.Skip("SLUICE_SKLEARN_SHARED not set: scikit-learn's tokens of the shared corpora not compared (see the comment for the commands)")
	}
	in, err := os.Open(name)
	if err != nil {
		t.Fatal(err)
	}
	defer in.Close()
	a := mustNew(t, sklearn)
	sc := bufio.NewScanner(in)
	sc.Buffer(nil, 256<<20)
	fields, fails := 0, 0
	for sc.Scan() {
		var row struct {
			Text   string   `json:"text"`
			Tokens []string `json:"tokens"`
		}
		if err := json.Unmarshal(sc.Bytes(), &row); err != nil {
			t.Fatalf("%s:%d: %v", name, fields+1, err)
		}
		fields++
		if len(row.Tokens) == 0 {
			row.Tokens = nil
		}
		if got := a.Terms([]byte(row.Text)); !slices.Equal(got, row.Tokens) {
			if fails++; fails <= 5 {
				t.Errorf("%s:%d: %q\nfast    %q\nsklearn %q", name, fields, row.Text, got, row.Tokens)
			}
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	if fields == 0 {
		t.Fatalf("%s holds no fields", name)
	}
	t.Logf("%d fields, %d differing", fields, fails)
}

// TestNoStemMatchesBleve checks english-nostem against bleve's english
// chain with the Porter filter left out, built here from bleve's registry
// apart from New's, on the tricky inputs and on the texts of the sklearn
// fixture.
func TestNoStemMatchesBleve(t *testing.T) {
	ref, err := registry.NewCache().DefineAnalyzer("en-nostem-test", map[string]interface{}{
		"type":          custom.Name,
		"tokenizer":     bleveunicode.Name,
		"token_filters": []string{en.PossessiveName, lowercase.Name, en.StopName},
	})
	if err != nil {
		t.Fatal(err)
	}
	a := mustNew(t, englishNoStem)
	texts := slices.Clone(tricky)
	for _, tt := range readSklearnFixture(t).Texts {
		texts = append(texts, tt.Text)
	}
	for _, s := range texts {
		var want []string
		for _, tok := range ref.Analyze([]byte(s)) {
			want = append(want, string(tok.Term))
		}
		if got := a.Terms([]byte(s)); !slices.Equal(got, want) {
			t.Errorf("%q: english-nostem %q, bleve without porter %q", s, got, want)
		}
	}
}

package analysis

import (
	"slices"
	"testing"
)

// FuzzAnalyzerMatchesBleve runs every chain on arbitrary bytes: no panic,
// the input left alone, and the fast path equal to the reference path
// (bleve's analyzer, or sklearnRef for the sklearn chain).
func FuzzAnalyzerMatchesBleve(f *testing.F) {
	for _, s := range tricky {
		f.Add([]byte(s))
	}
	analyzers := make([]*Analyzer, 0, len(Names()))
	for _, name := range Names() {
		analyzers = append(analyzers, mustNew(f, name))
	}
	f.Fuzz(func(t *testing.T, text []byte) {
		orig := string(text)
		for _, a := range analyzers {
			got := a.Terms(text)
			want := refTerms(a, text)
			if !slices.Equal(got, want) {
				t.Fatalf("%s %q: fast %q, reference %q", a.Name(), text, got, want)
			}
			if string(text) != orig {
				t.Fatalf("%s changed its input", a.Name())
			}
		}
	})
}

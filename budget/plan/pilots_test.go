package plan

import (
	"errors"
	"strings"
	"testing"
)

func TestReadPilots(t *testing.T) {
	csvIn := `method,cost,selector_params,trained_params,tokens,metric
# comment lines are skipped
bm25,lexical,0,1B,50M,0.41
ppl, forward, 125M, 1B, 1e8, 0.44
grad,forward+backward,1B,1B,2e8,0.47
custom,2,350M,1B,0,0.30
`
	jsonlIn := `{"method":"bm25","cost":"lexical","selector_params":0,"trained_params":"1B","tokens":5e7,"metric":0.41}

{"method":"x","cost":"forward","selector_params":125e6,"trained_params":1e9,"rows":1000,"tokens_per_row":250,"metric":0.5}
`
	ps, err := ReadPilots(strings.NewReader(csvIn), "p.csv")
	if err != nil {
		t.Fatal(err)
	}
	want := []Pilot{
		{Method: "bm25", Cost: "lexical", Passes: 0, SelectorParams: 0, TrainedParams: 1e9, Tokens: 5e7, Metric: 0.41},
		{Method: "ppl", Cost: "forward", Passes: 1, SelectorParams: 125e6, TrainedParams: 1e9, Tokens: 1e8, Metric: 0.44},
		{Method: "grad", Cost: "forward+backward", Passes: 3, SelectorParams: 1e9, TrainedParams: 1e9, Tokens: 2e8, Metric: 0.47},
		{Method: "custom", Cost: "2", Passes: 2, SelectorParams: 350e6, TrainedParams: 1e9, Tokens: 0, Metric: 0.30},
	}
	if len(ps) != len(want) {
		t.Fatalf("%d pilots, want %d", len(ps), len(want))
	}
	for i := range want {
		if ps[i] != want[i] {
			t.Errorf("csv row %d: %+v, want %+v", i, ps[i], want[i])
		}
	}
	ps, err = ReadPilots(strings.NewReader(jsonlIn), "p.jsonl")
	if err != nil {
		t.Fatal(err)
	}
	if len(ps) != 2 || ps[0] != want[0] || ps[1].Tokens != 250000 || ps[1].Passes != 1 {
		t.Errorf("jsonl: %+v", ps)
	}
}

func TestReadPilotsErrors(t *testing.T) {
	head := "method,cost,selector_params,trained_params,tokens,metric\n"
	tests := []struct{ name, in, say string }{
		{"empty", "", "no pilot rows"},
		{"header only", head, "no pilot rows"},
		{"no metric column", "method,cost,selector_params,trained_params,tokens\n", `no "metric"`},
		{"bad cost", head + "a,magic,0,1B,1M,0.1\n", "magic"},
		{"negative passes", head + "a,-1,0,1B,1M,0.1\n", "-1"},
		{"selector 0 model-based", head + "a,forward,0,1B,1M,0.1\n", "selector_params"},
		{"zero trained", head + "a,lexical,0,0,1M,0.1\n", "trained_params"},
		{"bad metric", head + "a,lexical,0,1B,1M,NaN\n", "metric"},
		{"bad tokens", head + "a,lexical,0,1B,lots,0.1\n", "tokens"},
		{"no method", head + ",lexical,0,1B,1M,0.1\n", "method"},
		{"bad json", `{"method":`, "p:1"},
		{"no tokens", `{"method":"a","cost":"lexical","selector_params":0,"trained_params":1e9,"metric":1}`, "tokens"},
	}
	for _, tt := range tests {
		_, err := ReadPilots(strings.NewReader(tt.in), "p")
		if !errors.Is(err, ErrBadPilots) || !strings.Contains(err.Error(), tt.say) {
			t.Errorf("%s: err = %v, want ErrBadPilots saying %q", tt.name, err, tt.say)
		}
	}
}

func FuzzReadPilots(f *testing.F) {
	f.Add("method,cost,selector_params,trained_params,tokens,metric\nbm25,lexical,0,1B,50M,0.41\n")
	f.Add(`{"method":"x","cost":"3","selector_params":1e9,"trained_params":1e9,"rows":10,"tokens_per_row":2,"metric":0.5}`)
	f.Fuzz(func(t *testing.T, in string) {
		ps, err := ReadPilots(strings.NewReader(in), "fuzz")
		if err != nil {
			if !errors.Is(err, ErrBadPilots) {
				t.Fatalf("error %v does not wrap ErrBadPilots", err)
			}
			return
		}
		for _, p := range ps {
			if p.Method == "" || !(p.TrainedParams > 0) || p.Passes < 0 || p.Tokens < 0 {
				t.Fatalf("accepted %+v", p)
			}
		}
	})
}

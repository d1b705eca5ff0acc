package plan

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"sluice/budget"
)

// ErrBadPilots reports a pilot file that cannot be read as pilot runs.
var ErrBadPilots = errors.New("bad pilot file")

// Cost classes of a selection method, in forward-pass equivalents per pool
// token of the selector model (common practice: one pass for perplexity or
// embeddings, a forward and a backward pass, about three forward passes, for
// gradient-based scores).
const (
	CostLexical         = "lexical"
	CostForward         = "forward"
	CostForwardBackward = "forward+backward"
)

// A Pilot is one pilot fine-tune: a base model of TrainedParams parameters
// trained on Tokens tokens chosen by Method, scoring Metric.
type Pilot struct {
	Method         string  `json:"method"`
	Cost           string  `json:"cost"`   // a cost class or a number of forward-pass equivalents
	Passes         float64 `json:"passes"` // Cost as forward-pass equivalents; 0 for lexical
	SelectorParams float64 `json:"selector_params"`
	// FlopsPerPoolToken, when not 0, is what selection cost per pool token as measured (sluice's
	// ledger divided by the pool's tokens); the plan charges it instead of the cost class's.
	FlopsPerPoolToken float64 `json:"flops_per_pool_token,omitempty"`
	TrainedParams     float64 `json:"trained_params"`
	Tokens            float64 `json:"tokens"`
	Metric            float64 `json:"metric"`
}

// ParseCost turns a cost class, or a stated number of forward-pass
// equivalents, into passes.
func ParseCost(s string) (float64, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case CostLexical:
		return 0, nil
	case CostForward:
		return 1, nil
	case CostForwardBackward:
		return 3, nil
	}
	v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	if err != nil || v < 0 || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, fmt.Errorf("cost %q: want %s, %s, %s or a number of forward passes of 0 or more: %w",
			s, CostLexical, CostForward, CostForwardBackward, ErrBadPilots)
	}
	return v, nil
}

// count reads a parameter or token count: 0, or anything budget.ParseCount takes.
func count(what, s string) (float64, error) {
	t := strings.TrimSpace(s)
	if v, err := strconv.ParseFloat(t, 64); err == nil && v == 0 {
		return 0, nil
	}
	v, err := budget.ParseCount(t)
	if err != nil {
		return 0, fmt.Errorf("%s: %w (%w)", what, err, ErrBadPilots)
	}
	return v, nil
}

var columns = []string{"method", "cost", "selector_params", "trained_params", "tokens", "metric"}

// fields builds a Pilot from named text fields. Tokens may instead be
// given as rows times tokens_per_row.
func fields(get func(string) (string, bool)) (Pilot, error) {
	var p Pilot
	var err error
	m, _ := get("method")
	if p.Method = strings.TrimSpace(m); p.Method == "" {
		return p, fmt.Errorf("method: empty: %w", ErrBadPilots)
	}
	c, ok := get("cost")
	if !ok {
		return p, fmt.Errorf("cost: missing: %w", ErrBadPilots)
	}
	p.Cost = strings.TrimSpace(c)
	if p.Passes, err = ParseCost(c); err != nil {
		return p, err
	}
	for _, f := range []struct {
		name string
		dst  *float64
	}{{"selector_params", &p.SelectorParams}, {"trained_params", &p.TrainedParams}} {
		s, ok := get(f.name)
		if !ok {
			return p, fmt.Errorf("%s: missing: %w", f.name, ErrBadPilots)
		}
		if *f.dst, err = count(f.name, s); err != nil {
			return p, err
		}
	}
	if s, ok := get("flops_per_pool_token"); ok && strings.TrimSpace(s) != "" {
		v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
		if err != nil || !(v > 0) || math.IsInf(v, 0) {
			return p, fmt.Errorf("flops_per_pool_token %q: want a number greater than zero, or nothing: %w", s, ErrBadPilots)
		}
		p.FlopsPerPoolToken = v
	}
	if p.TrainedParams == 0 {
		return p, fmt.Errorf("trained_params: must be greater than zero: %w", ErrBadPilots)
	}
	if p.Passes > 0 && p.SelectorParams == 0 {
		return p, fmt.Errorf("selector_params: 0 for a model-based cost %q: %w", p.Cost, ErrBadPilots)
	}
	if s, ok := get("tokens"); ok && strings.TrimSpace(s) != "" {
		if p.Tokens, err = count("tokens", s); err != nil {
			return p, err
		}
	} else {
		rs, ok1 := get("rows")
		ts, ok2 := get("tokens_per_row")
		if !ok1 || !ok2 {
			return p, fmt.Errorf("tokens: missing, and no rows and tokens_per_row: %w", ErrBadPilots)
		}
		r, err := count("rows", rs)
		if err != nil {
			return p, err
		}
		t, err := strconv.ParseFloat(strings.TrimSpace(ts), 64)
		if err != nil || !(t > 0) || math.IsInf(t, 0) {
			return p, fmt.Errorf("tokens_per_row %q: want a number greater than zero: %w", ts, ErrBadPilots)
		}
		p.Tokens = r * t
	}
	ms, ok := get("metric")
	if !ok {
		return p, fmt.Errorf("metric: missing: %w", ErrBadPilots)
	}
	if strings.TrimSpace(ms) == "" {
		return p, fmt.Errorf("metric: empty: fill in what the model trained on this subset scored: %w", ErrBadPilots)
	}
	if p.Metric, err = strconv.ParseFloat(strings.TrimSpace(ms), 64); err != nil || math.IsInf(p.Metric, 0) || math.IsNaN(p.Metric) {
		return p, fmt.Errorf("metric %q: want a finite number: %w", ms, ErrBadPilots)
	}
	return p, nil
}

// ReadPilots reads pilot runs as CSV with a header row or as JSONL, one
// object per line; the first non-blank byte decides which. Columns (or
// keys) are method, cost, selector_params, trained_params, tokens (or rows
// and tokens_per_row), metric and, optionally, flops_per_pool_token; others
// are ignored; name is used in error messages.
func ReadPilots(r io.Reader, name string) ([]Pilot, error) {
	br := bufio.NewReader(r)
	for {
		b, err := br.Peek(1)
		if err != nil {
			return nil, fmt.Errorf("read %s: no pilot rows: %w", name, ErrBadPilots)
		}
		if b[0] == ' ' || b[0] == '\t' || b[0] == '\n' || b[0] == '\r' {
			br.ReadByte()
			continue
		}
		if b[0] == '{' {
			return readJSONL(br, name)
		}
		return readCSV(br, name)
	}
}

func readCSV(r io.Reader, name string) ([]Pilot, error) {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	cr.TrimLeadingSpace = true
	cr.Comment = '#'
	head, err := cr.Read()
	if err != nil {
		return nil, fmt.Errorf("read %s: header: %w (%w)", name, err, ErrBadPilots)
	}
	col := map[string]int{}
	for i, h := range head {
		col[strings.ToLower(strings.TrimSpace(h))] = i
	}
	for _, c := range columns {
		if _, ok := col[c]; !ok && c != "tokens" {
			return nil, fmt.Errorf("read %s:1: no %q column (want %s): %w", name, c, strings.Join(columns, ", "), ErrBadPilots)
		}
	}
	var out []Pilot
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("read %s: %w (%w)", name, err, ErrBadPilots)
		}
		line, _ := cr.FieldPos(0)
		p, err := fields(func(k string) (string, bool) {
			i, ok := col[k]
			if !ok || i >= len(rec) {
				return "", false
			}
			return rec[i], true
		})
		if err != nil {
			return nil, fmt.Errorf("read %s:%d: %w", name, line, err)
		}
		out = append(out, p)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("read %s: no pilot rows: %w", name, ErrBadPilots)
	}
	return out, nil
}

func readJSONL(r io.Reader, name string) ([]Pilot, error) {
	sc := bufio.NewScanner(r)
	sc.Buffer(nil, 1<<20)
	var out []Pilot
	for line := 1; sc.Scan(); line++ {
		b := bytes.TrimSpace(sc.Bytes())
		if len(b) == 0 {
			continue
		}
		var m map[string]json.RawMessage
		if err := json.Unmarshal(b, &m); err != nil {
			return nil, fmt.Errorf("read %s:%d: %w (%w)", name, line, err, ErrBadPilots)
		}
		p, err := fields(func(k string) (string, bool) {
			v, ok := m[k]
			if !ok {
				return "", false
			}
			var s string
			if json.Unmarshal(v, &s) == nil {
				return s, true
			}
			return string(v), true
		})
		if err != nil {
			return nil, fmt.Errorf("read %s:%d: %w", name, line, err)
		}
		out = append(out, p)
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("read %s: %w", name, err)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("read %s: no pilot rows: %w", name, ErrBadPilots)
	}
	return out, nil
}

// FitFile reads the pilot runs in the file at path and fits them.
func FitFile(path string, opt FitOptions) ([]Curve, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	pilots, err := ReadPilots(f, path)
	if err != nil {
		return nil, err
	}
	return Fit(pilots, opt)
}

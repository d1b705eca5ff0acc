package vectors

import (
	"errors"
	"fmt"
	"path/filepath"
	"strings"
	"testing"
)

// The JSONL fixture's ids alternate "row-i" strings and numbers i (Python's
// json module wrote them); the check function sees each with its row.
func TestJSONLIDs(t *testing.T) {
	var seen []string
	check := func(row int, id string) error {
		want := fmt.Sprint(row)
		if row%2 == 0 {
			want = "row-" + want
		}
		if id != want {
			return fmt.Errorf("want %q", want)
		}
		seen = append(seen, id)
		return nil
	}
	j, err := OpenJSONL(filepath.Join("testdata", "cos_pool.jsonl"), check)
	if err != nil {
		t.Fatal(err)
	}
	defer j.Close()
	m, err := ReadMatrix(j)
	if err != nil {
		t.Fatal(err)
	}
	if m.Rows != 300 || m.Dim != 16 || len(seen) != 300 {
		t.Fatalf("%d×%d, %d ids", m.Rows, m.Dim, len(seen))
	}
	// The same float32 values as the .npy NumPy wrote.
	if n := mustNPY(t, filepath.Join("testdata", "cos_pool.npy")); !sameBits(m.Data, n.Data) {
		t.Fatal("JSONL and .npy values differ")
	}
}

func TestJSONLRefusals(t *testing.T) {
	tests := []struct {
		name, text string
		want       error
		says       string
	}{
		{"duplicate id", `{"id":"a","vector":[1]}` + "\n" + `{"id":"a","vector":[2]}`, ErrDuplicate, `v.jsonl:2: id "a" repeats line 1`},
		{"number and string id", `{"id":7,"vector":[1]}` + "\n" + `{"id":"7","vector":[2]}`, ErrDuplicate, "repeats line 1"},
		{"NaN", `{"id":1,"vector":[1, NaN]}`, ErrNotFinite, "v.jsonl:1: vector[1]"},
		{"Infinity", `{"id":1,"vector":[1, -Infinity]}`, ErrNotFinite, "v.jsonl:1: NaN or Infinity"},
		{"beyond float32", `{"id":1,"vector":[1e39]}`, ErrNotFinite, "float32"},
		{"lengths", `{"id":1,"vector":[1,2]}` + "\n" + `{"id":2,"vector":[1]}`, ErrLength, "v.jsonl:2: vector of 1 values, earlier rows have 2"},
		{"empty vector", `{"id":1,"vector":[]}`, ErrLength, "0 values"},
		{"no id", `{"vector":[1]}`, ErrFormat, "id: missing"},
		{"empty id", `{"id":"","vector":[1]}`, ErrFormat, "empty string"},
		{"bool id", `{"id":true,"vector":[1]}`, ErrFormat, "want a string or a number"},
		{"no vector", `{"id":1}`, ErrFormat, `no "vector"`},
		{"string value", `{"id":1,"vector":["1"]}`, ErrFormat, "want a number"},
		{"blank line", `{"id":1,"vector":[1]}` + "\n\n" + `{"id":2,"vector":[1]}`, ErrFormat, "v.jsonl:2: blank line"},
		{"not JSON", `{"id":1,"vector":[1]`, ErrFormat, "v.jsonl:1"},
		{"array", `[1]`, ErrFormat, "want an object"},
		{"bad number", `{"id":1,"vector":[01]}`, ErrFormat, `vector[0]: "01" is not a JSON number`},
	}
	for _, tt := range tests {
		j, err := NewJSONL(strings.NewReader(tt.text), "v.jsonl", nil)
		if err == nil {
			_, err = ReadMatrix(j)
		}
		if !errors.Is(err, tt.want) || !strings.Contains(err.Error(), tt.says) {
			t.Errorf("%s: error %v, want %v saying %q", tt.name, err, tt.want, tt.says)
		}
	}
	stop := errors.New("stop")
	j, err := NewJSONL(strings.NewReader(`{"id":1,"vector":[1]}`), "v.jsonl", func(int, string) error { return stop })
	if !errors.Is(err, stop) || !strings.Contains(err.Error(), `v.jsonl:1: id "1"`) {
		t.Errorf("check error %v (%v)", err, j)
	}
}

func TestJSONLEmpty(t *testing.T) {
	j, err := NewJSONL(strings.NewReader(""), "v.jsonl", nil)
	if err != nil {
		t.Fatal(err)
	}
	m, err := ReadMatrix(j)
	if err != nil || m.Rows != 0 || j.Dim() != 0 {
		t.Fatalf("%+v, %v", m, err)
	}
}

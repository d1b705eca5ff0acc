package vectors

import (
	"errors"
	"io"
	"math"
	"path/filepath"
	"strings"
	"testing"
)

type cosineRef struct {
	Max      []string
	Argmax   []int
	Centroid []string
}

// Source: NumPy 1.24 (Debian python3-numpy), testdata/make_fixtures.py: for
// seeded random float32 target (7×16, row 5 a copy of row 2) and pool
// (300×16, row 10 a copy of target 2, row 20 three times target 4)
// matrices, and the pool rounded to float16, NumPy's float64 cosines
// (rows divided by numpy.linalg.norm, then pn @ tn.T), their max and argmax
// (the first of equal maxima) over the targets, and the cosine to the mean
// of the unit target rows. The pool is read from .npy (float32, float16)
// and from JSONL (the float32 values written by Python's json module).
func TestCosineAgainstNumPy(t *testing.T) {
	const tol = 1e-14 // NumPy adds in another order than dot32; seen: within 1e-15
	var ref struct {
		NumPy string
		F32   cosineRef
		F16   cosineRef
	}
	readJSON(t, filepath.Join("testdata", "cosine_ref.json"), &ref)
	targets := mustNPY(t, filepath.Join("testdata", "cos_targets.npy"))
	pools := []struct {
		name string
		open func() (Source, func() error, error)
		ref  cosineRef
	}{
		{"float32 npy", func() (Source, func() error, error) {
			n, err := OpenNPY(filepath.Join("testdata", "cos_pool.npy"))
			return n, func() error { return n.Close() }, err
		}, ref.F32},
		{"float16 npy", func() (Source, func() error, error) {
			n, err := OpenNPY(filepath.Join("testdata", "cos_pool_f16.npy"))
			return n, func() error { return n.Close() }, err
		}, ref.F16},
		{"jsonl", func() (Source, func() error, error) {
			j, err := OpenJSONL(filepath.Join("testdata", "cos_pool.jsonl"), nil)
			return j, func() error { return j.Close() }, err
		}, ref.F32},
	}
	for _, pool := range pools {
		for _, method := range []Method{Max, Centroid} {
			t.Run(pool.name+" "+method.String(), func(t *testing.T) {
				s, err := NewScorer(targets, Options{Method: method})
				if err != nil {
					t.Fatal(err)
				}
				src, closeSrc, err := pool.open()
				if err != nil {
					t.Fatal(err)
				}
				defer closeSrc()
				res, err := s.Score(src)
				if err != nil {
					t.Fatal(err)
				}
				want := pool.ref.Max
				if method == Centroid {
					want = pool.ref.Centroid
				}
				if len(res.Scores) != len(want) {
					t.Fatalf("%d scores, NumPy %d", len(res.Scores), len(want))
				}
				for i, h := range want {
					if w := hexFloat(t, h); math.Abs(res.Scores[i]-w) > tol {
						t.Errorf("row %d: cosine %v, NumPy %v", i, res.Scores[i], w)
					}
				}
				if method == Centroid {
					if res.Best != nil {
						t.Errorf("Centroid gave best targets")
					}
					return
				}
				for i, w := range pool.ref.Argmax {
					if res.Best[i] != w {
						t.Errorf("row %d: best target %d, NumPy %d", i, res.Best[i], w)
					}
				}
			})
		}
	}
}

// Row 10 of the fixture's pool equals target rows 2 and 5: the tie goes to
// 2 with cosine 1 to within rounding, whatever the block and tile layout.
func TestCosineTiesLowestIndex(t *testing.T) {
	targets := mustNPY(t, filepath.Join("testdata", "cos_targets.npy"))
	pool := mustNPY(t, filepath.Join("testdata", "cos_pool.npy"))
	s, err := NewScorer(targets, Options{Method: Max})
	if err != nil {
		t.Fatal(err)
	}
	scores, best := make([]float64, 1), make([]int, 1)
	if _, err := s.Block(pool.Row(10), 10, scores, best); err != nil {
		t.Fatal(err)
	}
	if best[0] != 2 || math.Abs(scores[0]-1) > 1e-15 {
		t.Fatalf("best %d, score %v; want 2, 1", best[0], scores[0])
	}
}

// Scoring a row alone, in a block of the whole pool, or through Score
// gives the same bits.
func TestCosineBlocksAgree(t *testing.T) {
	targets := mustNPY(t, filepath.Join("testdata", "cos_targets.npy"))
	pool := mustNPY(t, filepath.Join("testdata", "cos_pool.npy"))
	for _, method := range []Method{Max, Centroid} {
		s, err := NewScorer(targets, Options{Method: method})
		if err != nil {
			t.Fatal(err)
		}
		all, bestAll := make([]float64, pool.Rows), make([]int, pool.Rows)
		if _, err := s.Block(pool.Data, 0, all, bestAll); err != nil {
			t.Fatal(err)
		}
		one, bestOne := make([]float64, 1), make([]int, 1)
		for i := range pool.Rows {
			if _, err := s.Block(pool.Row(i), i, one, bestOne); err != nil {
				t.Fatal(err)
			}
			if math.Float64bits(one[0]) != math.Float64bits(all[i]) || (method == Max && bestOne[0] != bestAll[i]) {
				t.Fatalf("%v row %d: alone %v (%d), in a block %v (%d)", method, i, one[0], bestOne[0], all[i], bestAll[i])
			}
		}
	}
}

func TestCosineZeroRows(t *testing.T) {
	targets := &Matrix{Rows: 2, Dim: 3, Data: []float32{1, 0, 0, 0, 1, 0}}
	pool := []float32{1, 1, 0, 0, 0, 0, 0, 0, 2}
	for _, method := range []Method{Max, Centroid} {
		s, err := NewScorer(targets, Options{Method: method})
		if err != nil {
			t.Fatal(err)
		}
		scores, best := make([]float64, 3), make([]int, 3)
		if _, err := s.Block(pool, 40, scores, best); !errors.Is(err, ErrZero) || !strings.Contains(err.Error(), "pool row 41") {
			t.Errorf("%v: error %v, want ErrZero naming pool row 41", method, err)
		}
		s, err = NewScorer(targets, Options{Method: method, AllowZero: true})
		if err != nil {
			t.Fatal(err)
		}
		zero, err := s.Block(pool, 40, scores, best)
		if err != nil || zero != 1 || !math.IsNaN(scores[1]) || math.IsNaN(scores[0]) || math.IsNaN(scores[2]) {
			t.Errorf("%v AllowZero: %v zero rows, scores %v, %v", method, zero, scores, err)
		}
		if method == Max && (best[1] != -1 || best[0] != 0 || scores[2] != 0) {
			t.Errorf("Max AllowZero: best %v, scores %v", best, scores)
		}
	}
}

func TestNewScorerRefusals(t *testing.T) {
	tests := []struct {
		name    string
		targets *Matrix
		method  Method
		want    error
		text    string
	}{
		{"zero target", &Matrix{Rows: 2, Dim: 2, Data: []float32{1, 0, 0, 0}}, Max, ErrZero, "target row 1"},
		{"NaN target", &Matrix{Rows: 2, Dim: 2, Data: []float32{1, 0, 0, float32(math.NaN())}}, Max, ErrNotFinite, "target row 1, column 1"},
		{"opposite targets", &Matrix{Rows: 2, Dim: 2, Data: []float32{1, 0, -2, 0}}, Centroid, ErrZero, "no centroid"},
	}
	for _, tt := range tests {
		if _, err := NewScorer(tt.targets, Options{Method: tt.method}); !errors.Is(err, tt.want) || !strings.Contains(err.Error(), tt.text) {
			t.Errorf("%s: error %v, want %v saying %q", tt.name, err, tt.want, tt.text)
		}
	}
	if _, err := NewScorer(&Matrix{}, Options{}); err == nil {
		t.Error("no target rows: no error")
	}
	if _, err := NewScorer(&Matrix{Rows: 1, Dim: 1, Data: []float32{1}}, Options{Method: 7}); err == nil {
		t.Error("unknown method: no error")
	}
}

// The work counts follow the documented formulas: targets·dim for the
// target norms (twice that, plus dim, with the centroid), then per pool
// row dim for its norm plus targets·dim (Max) or dim (Centroid).
func TestCosineWork(t *testing.T) {
	targets := mustNPY(t, filepath.Join("testdata", "cos_targets.npy")) // 7×16
	for _, tt := range []struct {
		method Method
		want   int64
	}{
		{Max, 7*16 + 300*16 + 300*7*16},
		{Centroid, 2*7*16 + 16 + 2*300*16},
	} {
		s, err := NewScorer(targets, Options{Method: tt.method})
		if err != nil {
			t.Fatal(err)
		}
		n, err := OpenNPY(filepath.Join("testdata", "cos_pool.npy"))
		if err != nil {
			t.Fatal(err)
		}
		res, err := s.Score(n)
		n.Close()
		if err != nil {
			t.Fatal(err)
		}
		if res.Work.MultiplyAdds != tt.want || res.Work.FLOPs() != 2*float64(tt.want) {
			t.Errorf("%v: work %+v, want %d multiply-adds", tt.method, res.Work, tt.want)
		}
	}
}

func TestScoreDimMismatch(t *testing.T) {
	s, err := NewScorer(&Matrix{Rows: 1, Dim: 3, Data: []float32{1, 2, 3}}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	n, err := OpenNPY(filepath.Join("testdata", "cos_pool.npy"))
	if err != nil {
		t.Fatal(err)
	}
	defer n.Close()
	if _, err := s.Score(n); !errors.Is(err, ErrLength) {
		t.Fatalf("error %v, want ErrLength", err)
	}
}

// matrixSource serves a Matrix as a Source.
type matrixSource struct {
	m    *Matrix
	next int
}

func (s *matrixSource) Dim() int { return s.m.Dim }

func (s *matrixSource) Read(dst []float32) (int, error) {
	n := min(len(dst)/s.m.Dim, s.m.Rows-s.next)
	if n == 0 {
		return 0, io.EOF
	}
	copy(dst, s.m.Data[s.next*s.m.Dim:(s.next+n)*s.m.Dim])
	s.next += n
	return n, nil
}

// Any number of workers gives the same bits as one, and the same error:
// the one of the lowest row.
func TestScoreWorkers(t *testing.T) {
	targets := mustNPY(t, filepath.Join("testdata", "cos_targets.npy"))
	one := mustNPY(t, filepath.Join("testdata", "cos_pool.npy"))
	pool := &Matrix{Rows: 10 * one.Rows, Dim: one.Dim}
	for range 10 {
		pool.Data = append(pool.Data, one.Data...)
	}
	for _, method := range []Method{Max, Centroid} {
		var want *Result
		for _, workers := range []int{0, 1, 2, 3, 8} {
			s, err := NewScorer(targets, Options{Method: method, Workers: workers})
			if err != nil {
				t.Fatal(err)
			}
			res, err := s.Score(&matrixSource{m: pool})
			if err != nil {
				t.Fatal(err)
			}
			if want == nil {
				want = res
				continue
			}
			if len(res.Scores) != pool.Rows || res.Work != want.Work {
				t.Fatalf("%v, %d workers: %d scores, work %+v; want %d, %+v", method, workers, len(res.Scores), res.Work, pool.Rows, want.Work)
			}
			for i := range res.Scores {
				if math.Float64bits(res.Scores[i]) != math.Float64bits(want.Scores[i]) || (method == Max && res.Best[i] != want.Best[i]) {
					t.Fatalf("%v, %d workers, row %d: %v, one worker %v", method, workers, i, res.Scores[i], want.Scores[i])
				}
			}
		}
	}
	bad := &Matrix{Rows: pool.Rows, Dim: pool.Dim, Data: append([]float32(nil), pool.Data...)}
	clear(bad.Row(2900))
	clear(bad.Row(2950))
	clear(bad.Row(1000)[1:])
	bad.Row(1000)[0] = float32(math.Inf(1))
	for _, workers := range []int{1, 2, 3} {
		s, err := NewScorer(targets, Options{Workers: workers})
		if err != nil {
			t.Fatal(err)
		}
		if _, err := s.Score(&matrixSource{m: bad}); !errors.Is(err, ErrNotFinite) || !strings.Contains(err.Error(), "pool row 1000, column 0") {
			t.Errorf("%d workers: error %v, want ErrNotFinite at pool row 1000", workers, err)
		}
		bad.Row(1000)[0] = 1
		if _, err := s.Score(&matrixSource{m: bad}); !errors.Is(err, ErrZero) || !strings.Contains(err.Error(), "pool row 2900") {
			t.Errorf("%d workers: error %v, want ErrZero at pool row 2900", workers, err)
		}
		bad.Row(1000)[0] = float32(math.Inf(1))
	}
}

package vectors

import (
	"fmt"
	"io"
	"math"
)

// Method says what a pool row's vector is compared with.
type Method int

const (
	// Max scores a pool row by its cosine to the nearest target row: the
	// largest cosine over all target rows; the best target is the lowest
	// index among those reaching it.
	Max Method = iota
	// Centroid scores a pool row by its cosine to the centroid of the
	// target rows: the mean of the target vectors each scaled to unit
	// length (the sum would give the same cosines; the mean is what is
	// kept).
	Centroid
)

func (m Method) String() string {
	switch m {
	case Max:
		return "max"
	case Centroid:
		return "centroid"
	}
	return fmt.Sprintf("Method(%d)", int(m))
}

// Options say how a Scorer scores.
type Options struct {
	Method Method
	// AllowZero gives a pool row whose vector is zero the score NaN and best
	// target −1, counted in Result.Zero, where by default such a row is an
	// error naming it (its cosine is undefined).
	AllowZero bool
	// Workers is the number of goroutines Score scores blocks on; 0 means
	// 1.
	Workers int
}

// BlockRows is the number of pool rows Score reads and scores at a time.
const BlockRows = 256

// tileBytes bounds the target rows scored against a block of pool rows
// before moving to the next targets, so that they stay in the core's
// cache while each pool row of the block passes over them.
const tileBytes = 64 << 10

// Scorer scores pool vectors against target vectors it holds. Its methods
// do not change it, so one Scorer may score blocks on several goroutines.
//
// A cosine is a·b / (|a|·|b|), taken in float64. For Max the dot product
// a·b multiplies float32 values into float64, where each product is exact,
// and adds them in float64 in index order; a norm is summed in float64 over
// four running sums (positions modulo 4, then (s0+s1)+(s2+s3)). For
// Centroid the centroid is held in float64 and the dot product multiplies
// float32 pool values by it, each product rounded to float64, over four
// running sums. The order is fixed, so the scores are the same on every
// machine.
type Scorer struct {
	o        Options
	dim      int
	nt       int
	targets  []float32 // the target rows as given
	norms    []float64 // |t| per target row
	centroid []float64
	cnorm    float64
	setup    Work
}

// NewScorer checks and holds the target rows (sharing targets.Data, which
// must not change while the Scorer is in use). A target row that is zero,
// or holds a NaN or infinity, is an error naming it; so, for Centroid, is
// a set of target rows whose unit vectors sum to zero.
//
// Its work is rows·dim multiply-adds for the norms, and as many again for
// the centroid.
func NewScorer(targets *Matrix, o Options) (*Scorer, error) {
	if o.Method != Max && o.Method != Centroid {
		return nil, fmt.Errorf("cosine scores: unknown method %v", o.Method)
	}
	if targets.Rows < 1 || targets.Dim < 1 || len(targets.Data) != targets.Rows*targets.Dim {
		return nil, fmt.Errorf("cosine scores: %d target rows of %d values (%d held): want at least one row", targets.Rows, targets.Dim, len(targets.Data))
	}
	s := &Scorer{o: o, dim: targets.Dim, nt: targets.Rows, targets: targets.Data, norms: make([]float64, targets.Rows)}
	for j := range s.nt {
		t := targets.Row(j)
		if bad := checkFinite(t); bad >= 0 {
			return nil, fmt.Errorf("cosine scores: target row %d, column %d: %v: %w", j, bad, t[bad], ErrNotFinite)
		}
		s.norms[j] = math.Sqrt(dot32(t, t))
		if s.norms[j] == 0 {
			return nil, fmt.Errorf("cosine scores: target row %d: %w", j, ErrZero)
		}
	}
	s.setup.MultiplyAdds = int64(s.nt) * int64(s.dim)
	if o.Method == Centroid {
		s.centroid = make([]float64, s.dim)
		for j := range s.nt {
			for k, x := range targets.Row(j) {
				s.centroid[k] += float64(x) / s.norms[j]
			}
		}
		for k := range s.centroid {
			s.centroid[k] /= float64(s.nt)
		}
		s.cnorm = math.Sqrt(dot64(s.centroid, s.centroid))
		if s.cnorm == 0 {
			return nil, fmt.Errorf("cosine scores: the %d target rows' unit vectors sum to zero, so they have no centroid direction: %w", s.nt, ErrZero)
		}
		s.setup.MultiplyAdds += int64(s.nt)*int64(s.dim) + int64(s.dim)
	}
	return s, nil
}

// Dim returns the vector length the Scorer takes.
func (s *Scorer) Dim() int { return s.dim }

// Targets returns the number of target rows.
func (s *Scorer) Targets() int { return s.nt }

// Setup returns the work NewScorer did.
func (s *Scorer) Setup() Work { return s.setup }

// BlockWork returns the work of scoring rows pool rows: rows·dim
// multiply-adds for their norms, plus rows·targets·dim (Max) or rows·dim
// (Centroid) for the dot products.
func (s *Scorer) BlockWork(rows int) Work {
	n := int64(rows) * int64(s.dim)
	if s.o.Method == Max {
		return Work{MultiplyAdds: n + n*int64(s.nt)}
	}
	return Work{MultiplyAdds: 2 * n}
}

// Block scores the pool rows in pool (len(pool)/Dim() of them, the first
// being pool row first, for errors) into scores and, for Max, best (nil
// for Centroid), which must have room for them. It returns how many zero
// rows it met (scored NaN, best −1) under AllowZero.
func (s *Scorer) Block(pool []float32, first int, scores []float64, best []int) (zero int, err error) {
	if len(pool)%s.dim != 0 {
		return 0, fmt.Errorf("cosine scores: %d values is not a whole number of rows of %d", len(pool), s.dim)
	}
	n := len(pool) / s.dim
	if len(scores) < n || (s.o.Method == Max && len(best) < n) {
		return 0, fmt.Errorf("cosine scores: room for %d scores and %d best targets, want %d", len(scores), len(best), n)
	}
	// scores holds each row's norm until its cosines are known.
	for i := range n {
		p := pool[i*s.dim : (i+1)*s.dim]
		norm := math.Sqrt(dot32(p, p))
		if norm == 0 || math.IsInf(norm, 0) || math.IsNaN(norm) {
			if bad := checkFinite(p); bad >= 0 {
				return 0, fmt.Errorf("cosine scores: pool row %d, column %d: %v: %w", first+i, bad, p[bad], ErrNotFinite)
			}
			if !s.o.AllowZero {
				return 0, fmt.Errorf("cosine scores: pool row %d: %w", first+i, ErrZero)
			}
			zero++
			norm = math.NaN()
		}
		scores[i] = norm
	}
	if s.o.Method == Centroid {
		for i := range n {
			if !math.IsNaN(scores[i]) {
				scores[i] = dotMixed(pool[i*s.dim:(i+1)*s.dim], s.centroid) / (scores[i] * s.cnorm)
			}
		}
		return zero, nil
	}
	s.blockMax(pool, n, scores[:n], best[:n])
	return zero, nil
}

// blockMax finds each pool row's nearest target, taking the targets a tile
// at a time, two pool rows by four targets per pass over the values (so
// each value loaded serves four or two multiply-adds). Every cosine's dot
// product is summed the same way whichever kernel computes it, so equal
// target rows give equal cosines; within a row the targets are met in
// ascending order and a strict > keeps the lowest index among equal ones.
func (s *Scorer) blockMax(pool []float32, n int, scores []float64, best []int) {
	d := s.dim
	norms := make([]float64, n)
	copy(norms, scores)
	live := make([]int, 0, n)
	for i := range n {
		scores[i], best[i] = math.Inf(-1), -1
		if math.IsNaN(norms[i]) {
			scores[i] = math.NaN()
			continue
		}
		live = append(live, i)
	}
	consider := func(i, j int, dot float64) {
		if c := dot / (norms[i] * s.norms[j]); c > scores[i] {
			scores[i], best[i] = c, j
		}
	}
	tile := max(4, tileBytes/(4*d)/4*4)
	var sums [8]float64
	for t0 := 0; t0 < s.nt; t0 += tile {
		t1 := min(s.nt, t0+tile)
		quads := t0 + (t1-t0)/4*4
		for k := 0; k < len(live); k += 2 {
			a := live[k]
			pa := pool[a*d : (a+1)*d]
			if k+1 == len(live) {
				for j := t0; j < quads; j += 4 {
					dot1x4(pa, s.targets[j*d:(j+4)*d], &sums)
					for q := range 4 {
						consider(a, j+q, sums[q])
					}
				}
				for j := quads; j < t1; j++ {
					consider(a, j, dot1(pa, s.targets[j*d:(j+1)*d]))
				}
				continue
			}
			b := live[k+1]
			pb := pool[b*d : (b+1)*d]
			for j := t0; j < quads; j += 4 {
				dot2x4(pa, pb, s.targets[j*d:(j+4)*d], &sums)
				for q := range 4 {
					consider(a, j+q, sums[q])
				}
				for q := range 4 {
					consider(b, j+q, sums[4+q])
				}
			}
			for j := quads; j < t1; j++ {
				t := s.targets[j*d : (j+1)*d]
				consider(a, j, dot1(pa, t))
				consider(b, j, dot1(pb, t))
			}
		}
	}
}

// Result is what Score returns.
type Result struct {
	Scores []float64 // one per pool row, in row order; NaN for a zero row under AllowZero
	Best   []int     // Max only: the nearest target row of each pool row, −1 for a zero row
	Zero   int       // zero pool rows met under AllowZero
	Work   Work      // NewScorer's work and the scoring's
}

// block is a block of pool rows on its way through Score.
type block struct {
	seq, first, n int
	vecs          []float32
	scores        []float64
	best          []int
	zero          int
	err           error
}

// Score reads src to its end, BlockRows rows at a time, and scores every
// row, on Options.Workers goroutines besides the one reading. The scores
// do not depend on the number of workers. Memory: two blocks of vectors
// per worker, and 8 bytes per row for the scores (16 with Max's best
// targets).
func (s *Scorer) Score(src Source) (*Result, error) {
	res := &Result{Work: s.setup}
	if src.Dim() == 0 {
		if _, err := src.Read(nil); err != io.EOF {
			return nil, fmt.Errorf("cosine scores: want an empty stream, got %w", err)
		}
		return res, nil
	}
	if src.Dim() != s.dim {
		return nil, fmt.Errorf("cosine scores: pool vectors of %d values, target vectors of %d: %w", src.Dim(), s.dim, ErrLength)
	}
	if rows, ok := knownRows(src); ok {
		res.Scores = make([]float64, 0, rows)
		if s.o.Method == Max {
			res.Best = make([]int, 0, rows)
		}
	}
	workers := max(1, s.o.Workers)
	inflight := 2 * workers
	todo, done := make(chan *block, inflight), make(chan *block, inflight)
	for range workers {
		go func() {
			for b := range todo {
				b.zero, b.err = s.Block(b.vecs[:b.n*s.dim], b.first, b.scores[:b.n], b.best)
				done <- b
			}
		}()
	}
	defer close(todo)
	var free []*block
	pending := map[int]*block{}
	var readErr, blockErr error
	sent, next, rows := 0, 0, 0
	for {
		if readErr == nil && blockErr == nil && sent-next < inflight {
			b := s.newBlock(&free)
			b.n, readErr = src.Read(b.vecs)
			if b.n > 0 {
				b.seq, b.first = sent, rows
				sent++
				rows += b.n
				todo <- b
			} else {
				free = append(free, b)
			}
			continue
		}
		if next == sent {
			break
		}
		b := <-done
		pending[b.seq] = b
		for b := pending[next]; b != nil; b = pending[next] {
			delete(pending, next)
			next++
			if blockErr == nil && b.err != nil {
				blockErr = b.err
			}
			if blockErr == nil {
				res.Scores = append(res.Scores, b.scores[:b.n]...)
				if s.o.Method == Max {
					res.Best = append(res.Best, b.best[:b.n]...)
				}
				res.Zero += b.zero
				res.Work = res.Work.Add(s.BlockWork(b.n))
			}
			free = append(free, b)
		}
	}
	if blockErr != nil {
		return nil, blockErr
	}
	if readErr != io.EOF {
		return nil, readErr
	}
	return res, nil
}

// newBlock takes a block from free or makes one.
func (s *Scorer) newBlock(free *[]*block) *block {
	if n := len(*free); n > 0 {
		b := (*free)[n-1]
		*free = (*free)[:n-1]
		b.err, b.zero = nil, 0
		return b
	}
	b := &block{vecs: make([]float32, BlockRows*s.dim), scores: make([]float64, BlockRows)}
	if s.o.Method == Max {
		b.best = make([]int, BlockRows)
	}
	return b
}

// The dot products of Max multiply float32 values into float64, where each
// product is exact (24-bit significands give at most 48 bits), so fusing a
// product with its add, as some machines do, cannot change a sum; each sum
// runs in index order with one accumulator, in dot1, dot1x4 and dot2x4
// alike.

// dot1 returns p·t for len(t) >= len(p).
func dot1(p, t []float32) float64 {
	t = t[:len(p)]
	var s float64
	for k, x := range p {
		s += float64(x) * float64(t[k])
	}
	return s
}

// dot1x4 writes into sums[0:4] the dot products of p with the four rows
// of len(p) values that follow one another in t.
func dot1x4(p, t []float32, sums *[8]float64) {
	n := len(p)
	t0, t1, t2, t3 := t[:n], t[n:2*n], t[2*n:3*n], t[3*n:4*n]
	var s0, s1, s2, s3 float64
	for k, x := range p {
		a := float64(x)
		s0 += a * float64(t0[k])
		s1 += a * float64(t1[k])
		s2 += a * float64(t2[k])
		s3 += a * float64(t3[k])
	}
	sums[0], sums[1], sums[2], sums[3] = s0, s1, s2, s3
}

// dot2x4 writes into sums the dot products of p (sums[0:4]) and q
// (sums[4:8]) with the four rows of len(p) values that follow one another
// in t.
func dot2x4(p, q, t []float32, sums *[8]float64) {
	n := len(p)
	q = q[:n]
	t0, t1, t2, t3 := t[:n], t[n:2*n], t[2*n:3*n], t[3*n:4*n]
	var a0, a1, a2, a3, b0, b1, b2, b3 float64
	for k, x := range p {
		a, b := float64(x), float64(q[k])
		u0, u1, u2, u3 := float64(t0[k]), float64(t1[k]), float64(t2[k]), float64(t3[k])
		a0 += a * u0
		a1 += a * u1
		a2 += a * u2
		a3 += a * u3
		b0 += b * u0
		b1 += b * u1
		b2 += b * u2
		b3 += b * u3
	}
	*sums = [8]float64{a0, a1, a2, a3, b0, b1, b2, b3}
}

// dot32 returns a·b for len(b) >= len(a) with four running sums over the
// positions modulo 4, for norms, where no tie hangs on the order.
func dot32(a, b []float32) float64 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(a); i += 4 {
		s0 += float64(a[i]) * float64(b[i])
		s1 += float64(a[i+1]) * float64(b[i+1])
		s2 += float64(a[i+2]) * float64(b[i+2])
		s3 += float64(a[i+3]) * float64(b[i+3])
	}
	for ; i < len(a); i++ {
		s0 += float64(a[i]) * float64(b[i])
	}
	return (s0 + s1) + (s2 + s3)
}

// dotMixed returns a·b for float32 a and float64 b; each product is rounded
// to float64 before it is added (the conversion forbids fusing), so that
// every machine gives the same sum.
func dotMixed(a []float32, b []float64) float64 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(a); i += 4 {
		s0 += float64(float64(a[i]) * b[i])
		s1 += float64(float64(a[i+1]) * b[i+1])
		s2 += float64(float64(a[i+2]) * b[i+2])
		s3 += float64(float64(a[i+3]) * b[i+3])
	}
	for ; i < len(a); i++ {
		s0 += float64(float64(a[i]) * b[i])
	}
	return (s0 + s1) + (s2 + s3)
}

// dot64 is dotMixed for two float64 vectors.
func dot64(a, b []float64) float64 {
	b = b[:len(a)]
	var s float64
	for i := range a {
		s += float64(a[i] * b[i])
	}
	return s
}

package dedup

import (
	"errors"
	"math"
	"math/bits"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// TestChooseBandsMatchesSciPy checks the bands chosen by area minimisation against
// testdata/bands.json, the same minimisation integrated with SciPy's quad (testdata/bands.py),
// for the S-curve of Mining of Massive Datasets, ch. 3.
func TestChooseBandsMatchesSciPy(t *testing.T) {
	var ref struct {
		Cases []struct {
			K           int
			T           float64
			Bands, Rows int
			FP, FN      float64
			Margin      *float64
		}
	}
	readJSON(t, "bands.json", &ref)
	for _, c := range ref.Cases {
		b, r, err := ChooseBands(c.K, c.T)
		if err != nil {
			t.Fatal(err)
		}
		if b != c.Bands || r != c.Rows {
			t.Errorf("K=%d t=%v: b=%d r=%d, SciPy b=%d r=%d (margin %v)", c.K, c.T, b, r, c.Bands, c.Rows, *c.Margin)
		}
		fp, fn := bandAreas(b, r, c.T)
		if math.Abs(fp-c.FP) > 1e-6 || math.Abs(fn-c.FN) > 1e-6 {
			t.Errorf("K=%d t=%v: areas %v, %v, SciPy %v, %v", c.K, c.T, fp, fn, c.FP, c.FN)
		}
	}
	if b, r, _ := ChooseBands(DefaultHashes, DefaultThreshold); b != 8 || r != 16 {
		t.Errorf("defaults: b=%d r=%d, documented b=8 r=16", b, r)
	}
}

func TestParamsErrors(t *testing.T) {
	tests := []struct {
		name string
		p    Params
	}{
		{"negative shingle", Params{Shingle: -1}},
		{"huge shingle", Params{Shingle: maxShingle + 1}},
		{"negative hashes", Params{Hashes: -3}},
		{"huge hashes", Params{Hashes: maxHashes + 1}},
		{"threshold above 1", Params{Threshold: 1.5}},
		{"negative threshold", Params{Threshold: -0.1}},
		{"NaN threshold", Params{Threshold: math.NaN()}},
		{"bands not dividing", Params{Hashes: 128, Bands: 3}},
		{"negative bands", Params{Bands: -8}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := NewSigner(tc.p); !errors.Is(err, ErrParams) {
				t.Errorf("NewSigner: %v, want ErrParams", err)
			}
			if _, err := NewDetector(tc.p); !errors.Is(err, ErrParams) {
				t.Errorf("NewDetector: %v, want ErrParams", err)
			}
		})
	}
	if _, _, err := ChooseBands(0, 0.5); !errors.Is(err, ErrParams) {
		t.Errorf("ChooseBands(0, 0.5): %v", err)
	}
}

// TestSignMatchesPythonWords checks the Signer's own word splitting (letters, marks and digits,
// case folded) against the words of testdata/reference.py (unicodedata categories,
// str.casefold): signing the text must give the signature of Python's words.
func TestSignMatchesPythonWords(t *testing.T) {
	texts, ref := loadFixture(t)
	s, err := NewSigner(Params{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	for i, text := range texts {
		got := sign(t, s, text)
		want := s.SignWords(nil, ref.Words[i])
		if !slices.Equal(got, want) {
			t.Errorf("row %d %q: signature differs from that of Python's words %q", i, text, ref.Words[i])
		}
	}
}

// TestMinHashMatchesExactJaccard checks MinHash estimates (Broder, 1997) against the exact
// Jaccard similarities of testdata/reference.json, computed by brute force with NumPy
// (testdata/reference.py), for every pair of fixture rows. A full signature's estimate must be
// within 4σ + 1/K of the exact value, σ = √(J(1−J)/K), the binomial error; the 1/K covers the
// count's granularity. The Detector's 8-bit sketches (b-bit minwise hashing, Li and König, 2010)
// agree on a position with probability P = 2⁻⁸ + (1 − 2⁻⁸)·J; their count of agreeing bytes
// must fall within an exact binomial bound at two-sided probability 10⁻⁶, since for J near 0 the
// count is nearly Poisson and a normal σ would not do (the test makes ~10⁴ such comparisons).
func TestMinHashMatchesExactJaccard(t *testing.T) {
	texts, ref := loadFixture(t)
	exact := exactJaccard(ref, len(texts))
	s, err := NewSigner(Params{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	sigs := make([]Signature, len(texts))
	for i, text := range texts {
		sigs[i] = sign(t, s, text)
	}
	const k = DefaultHashes
	worst, between := 0.0, 0
	ranges := map[float64]struct{ lo, hi int }{}
	for i := range sigs {
		for j := i + 1; j < len(sigs); j++ {
			jac := exact[i*len(texts)+j]
			est := sigs[i].Similarity(sigs[j])
			sd := math.Sqrt(jac * (1 - jac) / k)
			if d := math.Abs(est - jac); d > 4*sd+1.0/k {
				t.Errorf("rows %d, %d: estimate %.4f, exact %.4f, σ %.4f", i, j, est, jac, sd)
			} else if sd > 0 {
				worst = max(worst, (d-1.0/k)/sd)
			}
			if 0 < jac && jac < 1 {
				between++
			}
			m := 0
			for p := range sigs[i] {
				if byte(sigs[i][p]) == byte(sigs[j][p]) {
					m++
				}
			}
			r, ok := ranges[jac]
			if !ok {
				r.lo, r.hi = binomialRange(k, chance+(1-chance)*jac, 1e-6)
				ranges[jac] = r
			}
			if lo, hi := r.lo, r.hi; m < lo || m > hi {
				t.Errorf("rows %d, %d: %d of %d sketch bytes agree, exact J %.4f allows [%d, %d]", i, j, m, k, jac, lo, hi)
			}
		}
	}
	if between < 50 {
		t.Errorf("only %d pairs with 0 < J < 1: the fixture checks too little", between)
	}
	t.Logf("%d pairs with 0 < J < 1; largest deviation beyond 1/K: %.2fσ", between, worst)
}

// setSignature signs a set of shingle hashes directly, for tests that need sets of a known
// overlap.
func setSignature(s *Signer, xs []uint64) Signature {
	s.Reset()
	for _, x := range xs {
		s.addHash(x)
	}
	return s.Sum(nil)
}

// TestSCurve checks the Detector's candidate rate on pairs of known Jaccard similarity against
// the S-curve P(s) = 1 − (1 − s^r)^b of Leskovec, Rajaraman and Ullman, Mining of Massive
// Datasets, ch. 3: for each s the number of candidate pairs out of n must fall within an exact
// binomial bound at two-sided probability 10⁻⁶. The pairs are built here: two sets of random
// 64-bit shingle hashes sharing c of their u distinct elements, so s = c/u exactly.
func TestSCurve(t *testing.T) {
	const u, n = 200, 300
	sims := []float64{0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.85, 0.9, 0.95}
	s, err := NewSigner(Params{Seed: 7})
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 2))
	sigs := make([][2]Signature, 0, len(sims)*n)
	for _, sim := range sims {
		c := int(math.Round(sim * u))
		for range n {
			xs := make([]uint64, u)
			for i := range xs {
				xs[i] = rng.Uint64()
			}
			half := (u - c) / 2
			a := xs[:c+half]                                  // common, then A's own
			b := append(slices.Clone(xs[:c]), xs[c+half:]...) // common, then B's own
			sigs = append(sigs, [2]Signature{setSignature(s, a), setSignature(s, b)})
		}
	}
	for _, bands := range []int{4, 8, 16, 32} {
		d, err := NewDetector(Params{Seed: 7, Bands: bands})
		if err != nil {
			t.Fatal(err)
		}
		b, r := d.Bands()
		var pairs []Pair
		for idx, sim := range sims {
			cand := 0
			for p := range n {
				pair := sigs[idx*n+p]
				row := 2 * (idx*n + p)
				if _, err := d.Add(nil, row, pair[0]); err != nil {
					t.Fatal(err)
				}
				pairs, err = d.Add(pairs[:0], row+1, pair[1])
				if err != nil {
					t.Fatal(err)
				}
				for _, q := range pairs {
					if q.Earlier != row {
						t.Errorf("b=%d: row %d is a candidate with row %d of another pair", b, row+1, q.Earlier)
					}
				}
				if len(pairs) > 0 {
					cand++
				}
			}
			want := 1 - math.Pow(1-math.Pow(sim, float64(r)), float64(b))
			lo, hi := binomialRange(n, want, 1e-6)
			if cand < lo || cand > hi {
				t.Errorf("b=%d r=%d s=%.2f: %d of %d pairs are candidates, S-curve %.4f allows [%d, %d]", b, r, sim, cand, n, want, lo, hi)
			}
		}
	}
}

func TestShortRows(t *testing.T) {
	s, err := NewSigner(Params{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	// A row of fewer than 5 words is one shingle of all its words: equal to the same words, and
	// sharing nothing with a longer row that contains them.
	short := sign(t, s, "Call me Ishmael.")
	if got := sign(t, s, "call ME, ishmael"); !slices.Equal(got, short) {
		t.Error("the same three words give different signatures")
	}
	if sim := sign(t, s, "Call me Ishmael. Some years ago").Similarity(short); sim > 0.05 {
		t.Errorf("a short row and a longer one holding it: similarity %v, want about 0", sim)
	}
	if sim := sign(t, s, "Call me Ishmael").Similarity(sign(t, s, "Call me")); sim > 0.05 {
		t.Errorf("two different short rows: similarity %v, want about 0", sim)
	}
	// No words at all: the signature of no shingles.
	for _, text := range []string{"", "  ", "?!— …"} {
		if sig := sign(t, s, text); !sig.noWords() {
			t.Errorf("%q: signature has values", text)
		}
	}
}

func TestSignerWork(t *testing.T) {
	s, err := NewSigner(Params{Seed: 3, Shingle: 3, Hashes: 16})
	if err != nil {
		t.Fatal(err)
	}
	text := "one two three four five" // 5 words: 3 shingles of 3 words
	sign(t, s, text)
	sign(t, s, "a b") // a short row: 1 shingle of 2 words
	w := s.Work()
	// One shingle needs every round to fill every bin; three need fewer (sketchByDefinition counts).
	if w.MinHashes < 16+3 || w.MinHashes > 2*16*(1+3) {
		t.Errorf("%d evaluations", w.MinHashes)
	}
	want := Work{Bytes: int64(len(text) + 3), ShingleWords: 3*3 + 2, MinHashes: w.MinHashes}
	if w != want {
		t.Errorf("work %+v, want %+v", w, want)
	}
	if f := w.FLOPs(); f != 4*float64(want.Bytes)+2*11+12*float64(w.MinHashes) {
		t.Errorf("FLOPs %v", f)
	}
}

func TestSignerAllocs(t *testing.T) {
	s, err := NewSigner(Params{})
	if err != nil {
		t.Fatal(err)
	}
	text := []byte(strings.Repeat("It was the best of times, it was the worst of times, ", 8))
	var sig Signature
	s.Write(text)
	sig = s.Sum(sig)
	if n := testing.AllocsPerRun(50, func() { s.Write(text); sig = s.Sum(sig) }); n != 0 {
		t.Errorf("%v allocations per row", n)
	}
}

func FuzzSign(f *testing.F) {
	f.Add([]byte("It was the best of times, it was the WORST of times"), 7)
	f.Add([]byte("e\u0301t\u00e9 \xff\xe2\x82 ΣΊΣΥΦΟΣ"), 2)
	f.Add([]byte(""), 0)
	s, err := NewSigner(Params{Hashes: 16, Shingle: 3})
	if err != nil {
		f.Fatal(err)
	}
	f.Fuzz(func(t *testing.T, text []byte, cut int) {
		s.Write(text)
		whole := s.Sum(nil)
		if cut < 0 {
			cut = -cut
		}
		cut %= len(text) + 1
		s.Write(text[:cut])
		s.Write(text[cut:])
		if !slices.Equal(s.Sum(nil), whole) {
			t.Fatalf("%q cut at %d: signature differs from the whole", text, cut)
		}
		if len(whole) != 16 {
			t.Fatalf("signature of %d values", len(whole))
		}
	})
}

// sketchByDefinition is fast similarity sketching as Signer documents it, without stopping early:
// every shingle in every one of the 2K rounds. It returns the signature and the evaluations a
// Signer makes, which stops after the first round that leaves no bin empty.
func sketchByDefinition(s *Signer, xs []uint64) (Signature, int64) {
	k := len(s.sig)
	q := bits.Len(uint(2 * k))
	sig := make(Signature, k)
	for j := range sig {
		sig[j] = math.MaxUint32
	}
	var evals int64
	stopped := false
	for i := range 2 * k {
		for _, x := range xs {
			z := mix64(x ^ s.seeds[i])
			bin := int(uint64(uint32(z)) * uint64(k) >> 32)
			if i >= k {
				bin = (int(uint64(uint32(mix64(x^s.off)))*uint64(k)>>32) + i - k) % k
			}
			sig[bin] = min(sig[bin], uint32(i)<<(32-q)|uint32(z>>32)>>q)
		}
		if !stopped {
			evals += int64(len(xs))
		}
		if !slices.Contains(sig, math.MaxUint32) {
			stopped = true
		}
	}
	return sig, evals
}

// TestSketchMatchesDefinition checks the Signer's early stop and its bins against the definition,
// for a K that is not a power of two, sets from one shingle (every round needed) to many.
func TestSketchMatchesDefinition(t *testing.T) {
	s := mustSigner(t, Params{Hashes: 12, Bands: 4, Seed: 5})
	rng := rand.New(rand.NewPCG(3, 4))
	for _, n := range []int{1, 2, 5, 12, 40, 300} {
		xs := make([]uint64, n)
		for i := range xs {
			xs[i] = rng.Uint64()
		}
		before := s.Work().MinHashes
		got := setSignature(s, xs)
		want, evals := sketchByDefinition(s, xs)
		if !slices.Equal(got, want) {
			t.Errorf("%d shingles: %v, want %v", n, got, want)
		}
		if e := s.Work().MinHashes - before; e != evals {
			t.Errorf("%d shingles: %d evaluations, want %d", n, e, evals)
		}
	}
}

func TestWriteCount(t *testing.T) {
	s := mustSigner(t, Params{})
	var h Hasher
	for _, p := range []string{"ab\xe2\x82", "\xacc", ""} {
		if n, err := s.Write([]byte(p)); n != len(p) || err != nil {
			t.Errorf("Signer.Write(%q) = %d, %v", p, n, err)
		}
		if n, err := h.Write([]byte(p)); n != len(p) || err != nil {
			t.Errorf("Hasher.Write(%q) = %d, %v", p, n, err)
		}
	}
}

// TestRecallBands checks the bands against the S-curve 1 − (1 − t^r)^b of Leskovec, Rajaraman and
// Ullman (Mining of Massive Datasets, ch. 3), worked by hand: at t = 0.8, 16 bands of 8 values
// catch a pair with probability 1 − (1 − 0.8⁸)¹⁶ = 0.947, and 8 bands of 16 with 0.204, below 0.9;
// at t = 0.5, 64 bands of 2 give 1 − 0.75⁶⁴ ≈ 1 and 32 of 4 give 1 − 0.9375³² = 0.873.
func TestRecallBands(t *testing.T) {
	for _, c := range []struct {
		k    int
		t    float64
		want int
	}{{128, 0.8, 16}, {128, 0.9, 16}, {128, 0.5, 64}, {128, 0.1, 128}, {0, 0.8, 0}} {
		if got := RecallBands(c.k, c.t, 0.9); got != c.want {
			t.Errorf("RecallBands(%d, %v, 0.9) = %d, want %d", c.k, c.t, got, c.want)
		}
	}
	if p := ForThreshold(0.8); p.Bands != 16 || p.Hashes != 128 || p.Shingle != 5 {
		t.Errorf("ForThreshold(0.8) = %+v", p)
	}
}

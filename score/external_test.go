package score

import (
	"context"
	"math"
	"slices"
	"testing"
)

// sparse is a term-weight vector with terms ascending.
type sparse struct {
	terms []string
	w     []float64
}

// cosine returns a·b / (|a||b|), or 0 if either vector is zero.
func cosine(a, b sparse) float64 {
	var dot, na, nb float64
	for _, x := range a.w {
		na += x * x
	}
	for _, x := range b.w {
		nb += x * x
	}
	for i, j := 0, 0; i < len(a.terms) && j < len(b.terms); {
		switch {
		case a.terms[i] < b.terms[j]:
			i++
		case a.terms[i] > b.terms[j]:
			j++
		default:
			dot += a.w[i] * b.w[j]
			i++
			j++
		}
	}
	if na == 0 || nb == 0 {
		return 0
	}
	return dot / math.Sqrt(na*nb)
}

// Source: Manning, Raghavan & Schütze, Introduction to Information Retrieval
// (Cambridge UP, 2008), ch. 6.3, the three-novels example (Sense and
// Sensibility, Pride and Prejudice, Wuthering Heights). Term counts, the
// log-weighted unit vectors and the cosines are recalled from memory of the
// book's figures and recomputed here from the counts: weighting 1 + log10(tf),
// no idf, cosine normalisation; the book prints cos(SaS,PaP) ≈ 0.94,
// cos(SaS,WH) ≈ 0.79, cos(PaP,WH) ≈ 0.69.
func TestIIRThreeNovels(t *testing.T) {
	terms := []string{"affection", "gossip", "jealous", "wuthering"} // ascending
	// Counts per novel, in the term order above.
	counts := map[string][]int{
		"SaS": {115, 2, 10, 0},
		"PaP": {58, 0, 7, 0},
		"WH":  {20, 6, 11, 38},
	}
	// Unit vectors as printed by the book (3 decimals), same term order.
	book := map[string][]float64{
		"SaS": {0.789, 0.335, 0.515, 0},
		"PaP": {0.832, 0, 0.555, 0},
		"WH":  {0.524, 0.405, 0.465, 0.588},
	}
	w := weighting{tf: tfLog, idf: idfNone}
	ones := []float64{1, 1, 1, 1}
	vec := map[string]sparse{}
	for name, c := range counts {
		v := sparse{terms: terms, w: unitWeights(nil, c, ones, w)}
		vec[name] = v
		for i := range v.w {
			if math.Abs(v.w[i]-book[name][i]) > 0.0006 {
				t.Errorf("%s %s: weight %.4f, book %.3f", name, terms[i], v.w[i], book[name][i])
			}
		}
	}
	for _, tc := range []struct {
		a, b string
		want float64
	}{
		{"SaS", "PaP", 0.94},
		{"SaS", "WH", 0.79},
		{"PaP", "WH", 0.69},
	} {
		if got := cosine(vec[tc.a], vec[tc.b]); math.Abs(got-tc.want) > 0.005 {
			t.Errorf("cos(%s,%s) = %.4f, book %.2f", tc.a, tc.b, got, tc.want)
		}
	}
}

type sklearnFixture struct {
	Versions     map[string]string
	PoolTokens   [][]string `json:"pool_tokens"`
	TargetTokens [][]string `json:"target_tokens"`
	IDF          map[string]float64
	Cosine       [][]float64
	Mean, Max    []float64
}

// Source: scikit-learn 1.2.1 (Debian python3-sklearn) TfidfVectorizer with
// lowercase=True, token_pattern=(?u)\b\w\w+\b (its default), smooth_idf=True,
// sublinear_tf=False, norm='l2', fit on the pool and applied to the targets of
// testdata/texts.json; values written by testdata/sklearn_tfidf.py.
func TestTFIDFAgainstSklearn(t *testing.T) {
	const tol = 1e-12
	var f sklearnFixture
	readJSON(t, "sklearn_tfidf.json", &f)
	t.Logf("fixture versions: %v", f.Versions)
	pool, targets := fixtureTexts(t)
	for r, d := range pool {
		if !slices.Equal(d, f.PoolTokens[r]) {
			t.Fatalf("pool row %d tokens %q, sklearn %q", r, d, f.PoolTokens[r])
		}
	}
	for j, q := range targets {
		if !slices.Equal(q.Terms, f.TargetTokens[j]) {
			t.Fatalf("target %d tokens %q, sklearn %q", j, q.Terms, f.TargetTokens[j])
		}
	}
	c := newMemCorpus(pool)
	for term, want := range f.IDF {
		if got := sklearnWeighting.idfWeight(c.NumRows(), c.DF(term)); !closeRel(got, want, tol) {
			t.Errorf("idf(%q) = %v, sklearn %v", term, got, want)
		}
	}
	for _, agg := range []Aggregate{Sum, Max} {
		p := Params{Method: TFIDF, Aggregate: agg}
		res, err := Score(context.Background(), c, targets, p)
		if err != nil {
			t.Fatal(err)
		}
		want := f.Mean
		if agg == Max {
			want = f.Max
		}
		for r := range want {
			if !closeRel(res.Scores[r], want[r], tol) {
				t.Errorf("%v row %d: %v, sklearn %v", agg, r, res.Scores[r], want[r])
			}
			checkBest(t, agg.String(), r, res.Best[r], f.Cosine, tol)
		}
	}
	// The full cosine matrix, one Explain per pool row.
	for r := range pool {
		ex, err := Explain(c, targets, Params{Method: TFIDF, Aggregate: Max}, r, -1)
		if err != nil {
			t.Fatal(err)
		}
		got := make([]float64, len(targets))
		for _, m := range ex.Targets {
			got[m.Index] = m.Score
		}
		for j := range targets {
			if !closeRel(got[j], f.Cosine[j][r], tol) {
				t.Errorf("cos(target %d, row %d) = %v, sklearn %v", j, r, got[j], f.Cosine[j][r])
			}
		}
	}
}

// checkBest accepts best if the reference matrix (targets × rows) gives it the
// row's top score within tol; ties among equal bags of words must go to the
// lowest index, which the reference's first-argmax also does.
func checkBest(t *testing.T, what string, r int, best int32, ref [][]float64, tol float64) {
	t.Helper()
	top, arg := 0.0, -1
	for j := range ref {
		if ref[j][r] > top {
			top, arg = ref[j][r], j
		}
	}
	if arg < 0 {
		if best != -1 {
			t.Errorf("%s row %d: best %d, want -1", what, r, best)
		}
		return
	}
	if best < 0 || !closeRel(ref[best][r], top, tol) {
		t.Errorf("%s row %d: best %d (ref score %v), reference best %d (%v)", what, r, best, ref[max(best, 0)][r], arg, top)
		return
	}
	if ref[best][r] == top && int(best) > arg && slices.Equal(ref[best], ref[arg]) {
		t.Errorf("%s row %d: tie went to %d, want lowest index %d", what, r, best, arg)
	}
}

// Source: Robertson & Zaragoza (2009), "The Probabilistic Relevance Framework:
// BM25 and Beyond", eqs. for the RSJ-style idf ln(1 + (N−df+0.5)/(df+0.5)) and
// the BM25 tf saturation; worked by hand on the scikit-learn documentation
// corpus (pool rows 0–3 of texts.json), k1 = 1.2, b = 0.75:
//
//	d0 "this is the first document"            len 5
//	d1 "this document is the second document"  len 6
//	d2 "and this is the third one"             len 6
//	d3 "is this the first document"            len 5
//	N = 4, avglen = 22/4 = 5.5
//
// Query = d1 as a target row, binary: {document, is, second, the, this}.
//
//	idf(is) = idf(the) = idf(this) = ln(1 + 0.5/4.5) = ln(10/9) = 0.1053605157
//	idf(document) (df 3)           = ln(1 + 1.5/3.5) = ln(10/7) = 0.3566749439
//	idf(second)   (df 1)           = ln(1 + 3.5/1.5) = ln(10/3) = 1.2039728043
//
//	d0: K = 1.2·(0.25 + 0.75·5/5.5) = 1.1181818182
//	    every shared term has tf 1: w = 2.2/(1 + K) = 1.0386266094
//	    score = w·(ln(10/7) + 3·ln(10/9)) = 1.0386266094·0.6727564910 = 0.6987427931
//	d1: K = 1.2·(0.25 + 0.75·6/5.5) = 1.2818181818
//	    document tf 2: w = 4.4/3.2818181818 = 1.3407202216 → 0.4782013099
//	    tf-1 terms:    w = 2.2/2.2818181818 = 0.9641434263
//	    score = 0.4782013099 + 0.9641434263·(ln(10/3) + 3·ln(10/9)) = 1.9437517203
//	d2: K as d1; shares is, the, this: 0.9641434263·3·ln(10/9) = 0.3047479457
//	d3: same bag as d0 → 0.6987427931
func TestBM25HandWorked(t *testing.T) {
	pool, _ := fixtureTexts(t)
	c := newMemCorpus(pool[:4])
	q := []Query{{Terms: pool[1]}}
	prm := DefaultParams()
	prm.B = 0.75 // the hand-worked values take the textbook b
	res, err := Score(context.Background(), c, q, prm)
	if err != nil {
		t.Fatal(err)
	}
	l9, l7, l3 := math.Log(10.0/9), math.Log(10.0/7), math.Log(10.0/3)
	w0 := 2.2 / (1 + 1.2*(0.25+0.75*5/5.5))
	k1 := 1.2 * (0.25 + 0.75*6/5.5)
	w1, w2 := 4.4/(2+k1), 2.2/(1+k1)
	for r, want := range []struct{ closed, printed float64 }{
		{w0 * (l7 + 3*l9), 0.6987427931},
		{w1*l7 + w2*(l3+3*l9), 1.9437517203},
		{w2 * 3 * l9, 0.3047479457},
		{w0 * (l7 + 3*l9), 0.6987427931},
	} {
		if !closeRel(res.Scores[r], want.closed, 1e-12) || math.Abs(res.Scores[r]-want.printed) > 1e-10 {
			t.Errorf("d%d: %.12f, hand %.10f (closed form %.12f)", r, res.Scores[r], want.printed, want.closed)
		}
	}
}

type bm25Fixture struct {
	Versions     map[string]string
	PoolTokens   [][]string `json:"pool_tokens"`
	TargetTokens [][]string `json:"target_tokens"`
	AvgLen       float64
	IDF          map[string]float64
	Runs         []struct {
		K1, B    float64
		Scores   [][]float64
		Sum, Max []float64
		Best     []int32
	}
}

// Source: numpy 1.24.2 (Debian python3-numpy) implementation of the
// Robertson & Zaragoza (2009) BM25 formula in testdata/bm25_ref.py, over the
// texts of testdata/texts.json, for five (k1, b) pairs including b = 0, b = 1
// and k1 = 0.
func TestBM25AgainstNumpy(t *testing.T) {
	const tol = 1e-12
	var f bm25Fixture
	readJSON(t, "bm25_ref.json", &f)
	t.Logf("fixture versions: %v", f.Versions)
	pool, targets := fixtureTexts(t)
	for r, d := range pool {
		if !slices.Equal(d, f.PoolTokens[r]) {
			t.Fatalf("pool row %d tokens %q, reference %q", r, d, f.PoolTokens[r])
		}
	}
	for j, q := range targets {
		if !slices.Equal(q.Terms, f.TargetTokens[j]) {
			t.Fatalf("target %d tokens %q, reference %q", j, q.Terms, f.TargetTokens[j])
		}
	}
	c := newMemCorpus(pool)
	if !closeRel(c.AvgLen(), f.AvgLen, tol) {
		t.Errorf("avglen %v, reference %v", c.AvgLen(), f.AvgLen)
	}
	for term, want := range f.IDF {
		if got := bm25IDF(c.NumRows(), c.DF(term)); !closeRel(got, want, tol) {
			t.Errorf("idf(%q) = %v, reference %v", term, got, want)
		}
	}
	if len(f.Runs) == 0 {
		t.Fatal("no runs in fixture")
	}
	for _, run := range f.Runs {
		for _, agg := range []Aggregate{Sum, Max} {
			p := Params{Method: BM25, Aggregate: agg, K1: run.K1, B: run.B}
			res, err := Score(context.Background(), c, targets, p)
			if err != nil {
				t.Fatal(err)
			}
			want := run.Sum
			if agg == Max {
				want = run.Max
			}
			name := p.Aggregate.String()
			for r := range want {
				if !closeRel(res.Scores[r], want[r], tol) {
					t.Errorf("k1=%v b=%v %s row %d: %v, reference %v", run.K1, run.B, name, r, res.Scores[r], want[r])
				}
				checkBest(t, name, r, res.Best[r], run.Scores, tol)
				if res.Best[r] != run.Best[r] && !closeRel(run.Scores[max(res.Best[r], 0)][r], run.Max[r], tol) {
					t.Errorf("k1=%v b=%v %s row %d: best %d, reference %d", run.K1, run.B, name, r, res.Best[r], run.Best[r])
				}
			}
		}
	}
}

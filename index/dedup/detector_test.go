package dedup

import (
	"encoding/binary"
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestDetectorOnFixture runs the Detector with the default parameters over testdata/rows.json
// and checks its pairs and clusters against the exact Jaccard similarities of
// testdata/reference.py (NumPy, brute force):
//   - rows with equal shingle sets (exact J = 1) have equal signatures, so they are candidates
//     in every band and confirmed: they must share a cluster;
//   - every pair's estimate must agree with the exact similarity within the exact binomial bound
//     of TestMinHashMatchesExactJaccard, so a confirmed pair (estimate ≥ 0.8) must have an exact
//     similarity that allows it;
//   - rows in one cluster must be linked by a chain of pairs of exact J ≥ 0.5 (any lower and a
//     confirmed estimate of 0.8 is beyond 10⁻⁶ for K = 128).
func TestDetectorOnFixture(t *testing.T) {
	texts, ref := loadFixture(t)
	n := len(texts)
	exact := exactJaccard(ref, n)
	s, err := NewSigner(Params{Seed: 11})
	if err != nil {
		t.Fatal(err)
	}
	d, err := NewDetector(Params{Seed: 11})
	if err != nil {
		t.Fatal(err)
	}
	var pairs []Pair
	confirmed := 0
	for i, text := range texts {
		var err error
		pairs, err = d.Add(pairs[:0], i, sign(t, s, text))
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range pairs {
			jac := exact[p.Earlier*n+p.Later]
			m := int(math.Round((p.Similarity*(1-chance) + chance) * DefaultHashes))
			if lo, hi := binomialRange(DefaultHashes, chance+(1-chance)*jac, 1e-6); p.Similarity > 0 && (m < lo || m > hi) {
				t.Errorf("pair %+v: exact J %.4f allows [%d, %d] agreeing bytes, got %d", p, jac, lo, hi, m)
			}
			if p.Confirmed != (p.Similarity >= DefaultThreshold) {
				t.Errorf("pair %+v: confirmed does not follow the threshold", p)
			}
			if p.Confirmed {
				confirmed++
			}
		}
	}
	c := d.Clusters()
	if c.Len() != n {
		t.Fatalf("clusters cover %d rows, want %d", c.Len(), n)
	}
	// Python's graph at J ≥ 0.5, as connected components.
	comp := make([]int, n)
	for i := range comp {
		comp[i] = i
	}
	var find func(int) int
	find = func(x int) int {
		if comp[x] != x {
			comp[x] = find(comp[x])
		}
		return comp[x]
	}
	ones := 0
	for _, p := range ref.Jaccard {
		i, j, jac := int(p[0]), int(p[1]), p[2]
		if jac >= 0.5 {
			comp[find(j)] = find(i)
		}
		if jac == 1 {
			ones++
			if c.Find(i) != c.Find(j) {
				t.Errorf("rows %d and %d have equal shingle sets but are in different clusters", i, j)
			}
		}
	}
	for _, g := range c.Groups() {
		for _, row := range g[1:] {
			if find(row) != find(g[0]) {
				t.Errorf("cluster %v joins rows %d and %d, not linked by exact J ≥ 0.5", g, g[0], row)
			}
		}
		if c.Find(g[len(g)-1]) != g[0] {
			t.Errorf("cluster %v: representative %d, want its first row", g, c.Find(g[len(g)-1]))
		}
	}
	if ones == 0 || confirmed == 0 {
		t.Errorf("%d pairs of J = 1, %d confirmed: the fixture checks too little", ones, confirmed)
	}
	t.Logf("%d clusters, %d confirmed pairs, work %+v (%.3g FLOPs)", len(c.Groups()), confirmed, d.Work(), d.Work().FLOPs())
}

func TestDetectorErrors(t *testing.T) {
	d, err := NewDetector(Params{Hashes: 8, Bands: 2})
	if err != nil {
		t.Fatal(err)
	}
	sig := make(Signature, 8)
	if _, err := d.Add(nil, 5, sig); err != nil {
		t.Fatal(err)
	}
	for _, row := range []int{5, 4, -1, MaxRow + 1} {
		if _, err := d.Add(nil, row, sig); !errors.Is(err, ErrRow) {
			t.Errorf("Add(%d): %v, want ErrRow", row, err)
		}
	}
	if _, err := d.Add(nil, 6, sig[:7]); !errors.Is(err, ErrLength) {
		t.Errorf("short signature: %v, want ErrLength", err)
	}
	// A row without words is skipped, and is nobody's candidate.
	empty := setSignature(mustSigner(t, Params{Hashes: 8, Bands: 2}), nil)
	for row := 7; row < 9; row++ {
		if pairs, err := d.Add(nil, row, empty); err != nil || len(pairs) != 0 {
			t.Errorf("row %d without words: %v, %v", row, pairs, err)
		}
	}
	if got := d.Clusters().Len(); got != 9 {
		t.Errorf("clusters cover %d rows, want 9", got)
	}
}

func mustSigner(t *testing.T, p Params) *Signer {
	s, err := NewSigner(p)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func TestClustersKeep(t *testing.T) {
	nan := math.NaN()
	tests := []struct {
		name   string
		unions [][2]int
		scores []float64
		want   []int
	}{
		{"no clusters", nil, []float64{1, 2}, []int{0, 1}},
		{"best kept", [][2]int{{0, 2}}, []float64{0.1, 5, 0.9}, []int{2, 1, 2}},
		{"tie goes to the first", [][2]int{{1, 3}, {3, 0}}, []float64{2, 1, 3, 2}, []int{0, 0, 2, 0}},
		{"NaN below every number", [][2]int{{0, 1}}, []float64{nan, -math.MaxFloat64}, []int{1, 1}},
		{"all NaN: first", [][2]int{{0, 1}}, []float64{nan, nan}, []int{0, 0}},
		{"chain", [][2]int{{0, 1}, {1, 2}, {3, 4}}, []float64{1, 3, 2, 5, 5}, []int{1, 1, 1, 3, 3}},
		{"scores beyond the forest", [][2]int{{0, 1}}, []float64{1, 2, 7}, []int{1, 1, 2}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			var c Clusters
			for _, u := range tc.unions {
				if err := c.Union(u[0], u[1]); err != nil {
					t.Fatal(err)
				}
			}
			got, err := c.Keep(tc.scores)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(got, tc.want) {
				t.Errorf("Keep = %v, want %v", got, tc.want)
			}
		})
	}
	var c Clusters
	if err := c.Union(0, 4); err != nil {
		t.Fatal(err)
	}
	if _, err := c.Keep(make([]float64, 3)); !errors.Is(err, ErrLength) {
		t.Errorf("too few scores: %v, want ErrLength", err)
	}
	if err := c.Union(-1, 2); !errors.Is(err, ErrRow) {
		t.Errorf("Union(-1, 2): %v, want ErrRow", err)
	}
}

func TestClustersGroups(t *testing.T) {
	var c Clusters
	for _, u := range [][2]int{{5, 3}, {7, 5}, {1, 2}, {9, 9}} {
		if err := c.Union(u[0], u[1]); err != nil {
			t.Fatal(err)
		}
	}
	want := [][]int{{1, 2}, {3, 5, 7}}
	if got := c.Groups(); !slices.EqualFunc(got, want, slices.Equal) {
		t.Errorf("Groups = %v, want %v", got, want)
	}
	for row, rep := range map[int]int{7: 3, 2: 1, 9: 9, 0: 0, 100: 100, -4: -1} {
		if got := c.Find(row); got != rep {
			t.Errorf("Find(%d) = %d, want %d", row, got, rep)
		}
	}
}

func TestTable(t *testing.T) {
	var tb table
	for i := uint64(1); i <= 5000; i++ {
		if _, found := tb.getOrPut(i*0x9E3779B97F4A7C15, uint32(i)); found {
			t.Fatalf("key %d found before it was put", i)
		}
	}
	for i := uint64(1); i <= 5000; i++ {
		if v, found := tb.getOrPut(i*0x9E3779B97F4A7C15, 0); !found || v != uint32(i) {
			t.Fatalf("key %d: %d, %v", i, v, found)
		}
	}
	if tb.n != 5000 || 4*tb.n > 3*tb.len() {
		t.Errorf("%d keys in %d slots", tb.n, tb.len())
	}
}

// TestEstimateCountsBytes checks the eight-at-a-time count of agreeing sketch bytes against a
// count byte by byte, for a K that is a multiple of 8 and one that is not.
func TestEstimateCountsBytes(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	for _, k := range []int{128, 12} {
		d, err := NewDetector(Params{Hashes: k, Bands: 4})
		if err != nil {
			t.Fatal(err)
		}
		sig := make(Signature, k)
		for row := range 50 {
			for i := range sig {
				// Few distinct low bytes, so that many agree.
				sig[i] = uint32(rng.IntN(3))<<8 | uint32(rng.IntN(3))
			}
			if _, err := d.Add(nil, row, sig); err != nil {
				t.Fatal(err)
			}
		}
		for x := range uint32(50) {
			for y := range uint32(50) {
				m := 0
				for i := range k {
					if d.sketch[int(x)*k+i] == d.sketch[int(y)*k+i] {
						m++
					}
				}
				if got, want := d.estimate(x, y), sketchSimilarity(m, k); got != want {
					t.Fatalf("K=%d rows %d, %d: estimate %v, want %v", k, x, y, got, want)
				}
			}
		}
	}
}

// TestAddMarksMatchesAdd feeds the rows of testdata/rows.json (and a row without words) to one
// Detector by signature and to another by marks, as a set of stored segments replays them, and
// asks for the same pairs, clusters and work.
func TestAddMarksMatchesAdd(t *testing.T) {
	texts, _ := loadFixture(t)
	texts = append(texts, "", "!!")
	prm := ForThreshold(DefaultThreshold)
	s, err := NewSigner(prm)
	if err != nil {
		t.Fatal(err)
	}
	bySig, _ := NewDetector(prm)
	byMarks, _ := NewDetector(prm)
	var p1, p2 []Pair
	var marks []byte
	for i, text := range texts {
		sig := sign(t, s, text)
		marks = byMarks.AppendMarks(marks[:0], sig)
		if len(marks) != 0 && len(marks) != byMarks.MarksLen() {
			t.Fatalf("row %d: %d bytes of marks, want %d", i, len(marks), byMarks.MarksLen())
		}
		if p1, err = bySig.Add(p1[:0], 2*i, sig); err != nil {
			t.Fatal(err)
		}
		if p2, err = byMarks.AddMarks(p2[:0], 2*i, marks); err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(p1, p2) {
			t.Fatalf("row %d: pairs %v by signature, %v by marks", i, p1, p2)
		}
	}
	for r := range bySig.Clusters().Len() {
		if a, b := bySig.Clusters().Find(r), byMarks.Clusters().Find(r); a != b {
			t.Errorf("row %d: cluster %d by signature, %d by marks", r, a, b)
		}
	}
	if bySig.Work() != byMarks.Work() {
		t.Errorf("work %+v by signature, %+v by marks", bySig.Work(), byMarks.Work())
	}
	if _, err := byMarks.AddMarks(nil, 1<<20, marks[:3]); !errors.Is(err, ErrLength) {
		t.Errorf("3 bytes of marks: %v, want ErrLength", err)
	}
}

// TestBulkMatchesDetector gives the same rows, by their marks, to a Detector in order and to a
// Bulk at once, and asks for the same clusters and work: the rows of testdata/rows.json, rows
// without words, and each fixture row again at once and far later (so buckets hold several rows
// and rows meet the same first in several bands), under several thresholds. The Detector it is
// held to is checked against brute-force Jaccard similarities from NumPy in TestDetectorOnFixture.
func TestBulkMatchesDetector(t *testing.T) {
	texts, _ := loadFixture(t)
	texts = append(texts, "", "!!")
	texts = append(texts, texts...)
	for _, th := range []float64{0.5, 0.8, 0.95} {
		prm := ForThreshold(th)
		s, err := NewSigner(prm)
		if err != nil {
			t.Fatal(err)
		}
		det, _ := NewDetector(prm)
		bulk, err := NewBulk(prm)
		if err != nil {
			t.Fatal(err)
		}
		var marks []byte
		for i, text := range texts {
			marks = det.AppendMarks(marks[:0], sign(t, s, text))
			if _, err := det.AddMarks(nil, 3*i, marks); err != nil {
				t.Fatal(err)
			}
			if err := bulk.Add(3*i, slices.Clone(marks)); err != nil { // a Bulk keeps what it is given
				t.Fatal(err)
			}
		}
		var c Clusters
		w, err := bulk.Find(&c)
		if err != nil {
			t.Fatal(err)
		}
		if w != det.Work() {
			t.Errorf("threshold %v: work %+v in bulk, %+v by the detector", th, w, det.Work())
		}
		joined := 0
		for r := range det.Clusters().Len() {
			if a, b := det.Clusters().Find(r), c.Find(r); a != b {
				t.Fatalf("threshold %v: row %d: cluster %d by the detector, %d in bulk", th, r, a, b)
			} else if a != r {
				joined++
			}
		}
		if joined == 0 {
			t.Errorf("threshold %v: no row joined a cluster: the check shows nothing", th)
		}
		if err := bulk.Add(0, marks); !errors.Is(err, ErrRow) {
			t.Errorf("a row out of order: %v, want ErrRow", err)
		}
	}
}

// TestPassesInPartsMatchDetector holds Passes whose bound cuts each band's keys into parts (1, 2, 3
// and 7 passes a band) to the Detector's clusters and work on the rows of TestBulkMatchesDetector,
// the marks read through the buffer Join offers, as from a file. An internal property: the Detector
// itself is held to NumPy's Jaccard similarities in TestDetectorOnFixture.
func TestPassesInPartsMatchDetector(t *testing.T) {
	texts, _ := loadFixture(t)
	texts = append(texts, "", "!!")
	texts = append(texts, texts...)
	for _, th := range []float64{0.5, 0.8} {
		prm := ForThreshold(th)
		s, err := NewSigner(prm)
		if err != nil {
			t.Fatal(err)
		}
		det, _ := NewDetector(prm)
		var rows []int
		var stored [][]byte
		for i, text := range texts {
			m := det.AppendMarks(nil, sign(t, s, text))
			if _, err := det.AddMarks(nil, 5*i+1, m); err != nil {
				t.Fatal(err)
			}
			if len(m) > 0 {
				rows, stored = append(rows, 5*i+1), append(stored, m)
			}
		}
		for _, parts := range []int64{1, 2, 3, 7} {
			mem := TableBytes(len(stored)) / parts
			if parts == 1 {
				mem = 0
			}
			p, err := NewPasses(prm, len(stored), mem)
			if err != nil {
				t.Fatal(err)
			}
			if got := p.Len(); got%det.b != 0 || got < det.b*int(parts) {
				t.Fatalf("threshold %v, bound %d: %d passes, want %d a band or more", th, mem, got, parts)
			}
			for k := range p.Len() {
				j := p.Start(k)
				for i, m := range stored {
					p.Put(uint32(i), binary.LittleEndian.Uint64(m[8*j:]))
				}
			}
			var c Clusters
			w, err := p.Join(&c, func(i uint32, buf []byte) (int, []byte, error) {
				return rows[i], append(buf[:0], stored[i]...), nil
			})
			if err != nil {
				t.Fatal(err)
			}
			if w != det.Work() {
				t.Errorf("threshold %v, %d parts: work %+v, %+v by the detector", th, parts, w, det.Work())
			}
			for r := range det.Clusters().Len() {
				if a, b := det.Clusters().Find(r), c.Find(r); a != b {
					t.Fatalf("threshold %v, %d parts: row %d: cluster %d by the detector, %d in passes", th, parts, r, a, b)
				}
			}
		}
	}
}

package run

import (
	"context"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"sluice/budget"
	"sluice/index"
	"sluice/index/decontam"
	"sluice/index/dedup"
	selection "sluice/select"
)

// Guards protect a pick from what a pool holds besides good rows: copies of one row, rows that
// leak an evaluation set, and one source taking the whole budget.
type Guards struct {
	// KeepDuplicates keeps every copy; by default a pick keeps at most one row of each cluster of
	// exact and near duplicates, the best-scored (ties by input order).
	KeepDuplicates bool `json:"keep_duplicates,omitempty"`
	// NearDup is the Jaccard similarity of word 5-gram shingles at or above which two rows are
	// near duplicates, in (0, 1]; 0 takes DefaultNearDup.
	NearDup float64 `json:"near_dup,omitempty"`
	// Exclude lists evaluation files: a pool row sharing a word n-gram of ExcludeN words with any
	// of their rows is never kept.
	Exclude  []string `json:"exclude,omitempty"`
	ExcludeN int      `json:"exclude_ngram,omitempty"`
	// MaxShare caps the share of the training budget one pool file's kept rows may take, by the
	// file's path as indexed; "" applies to every file without a cap of its own.
	MaxShare map[string]float64 `json:"max_share,omitempty"`
}

// Check refuses guards that cannot be, each error naming its flag: a threshold outside (0, 1], an
// n-gram length outside [1, 1000] words, and a threshold given (nearDupGiven) with duplicates kept.
func (g Guards) Check(nearDupGiven bool) error {
	switch {
	case !(g.NearDup > 0 && g.NearDup <= 1):
		return fmt.Errorf("--near-dup %v: give a Jaccard similarity above 0 and at most 1", g.NearDup)
	case g.KeepDuplicates && nearDupGiven:
		return fmt.Errorf("--near-dup has no use with --keep-duplicates")
	case g.ExcludeN < 1 || g.ExcludeN > 1000:
		return fmt.Errorf("--exclude-ngram %d: give 1 to 1000 words", g.ExcludeN)
	}
	return nil
}

// DefaultNearDup is the near-duplicate threshold unless told otherwise.
const DefaultNearDup = 0.8

// DefaultExcludeN is the n-gram length for decontamination: 13 words is common practice for
// checking training data against benchmarks.
const DefaultExcludeN = decontam.DefaultN

// minhashes is the signature length K (see dedup.ForThreshold).
const minhashes = dedup.DefaultHashes

// chooseBands picks the LSH bands for threshold t: 16 bands of 8 values for t = 0.8.
func chooseBands(t float64) int { return dedup.ForThreshold(t).Bands }

// guarded is what the guards found in one pass over the pool.
type guarded struct {
	// cluster names each row's cluster of exact and near duplicates by one of its rows; nil when
	// duplicates are kept. groups counts the clusters of two rows or more.
	cluster     func(row int) int
	groups      int
	exactDups   int                  // rows whose normalised text an earlier row has
	contam      map[int]decontam.Hit // by row
	evalFiles   []string
	bands       int
	work        dedup.Work
	built       *index.Dups     // the index's clusters, when the pick takes them instead of hashing
	evalWork    int64           // words checked against the evaluation set
	evalBuilt   *index.Excluded // the index's check of the same files, when the pick takes it
	longest     int             // the most words a pool row had, checked against them
	keyed       bool            // the exact keys were read from the index's segments, not hashed
	inPool      int             // pool rows that are also target rows
	inPoolFirst string          // the first one's id
}

// active reports whether the guards need a pass over the pool.
func (g Guards) active() bool { return !g.KeepDuplicates || len(g.Exclude) > 0 }

// guard reads the pool once more, finding exact and near duplicates and rows that share an n-gram
// with an evaluation file, and charges the work.
func (p *picked) guard(ctx context.Context) error {
	g := p.opt.Guards
	if !g.active() {
		return nil
	}
	gd := &guarded{contam: map[int]decontam.Hit{}}
	var set *decontam.Set
	if len(g.Exclude) > 0 {
		gd.evalFiles = g.Exclude
		ex, hits, err := p.indexExcluded()
		if err != nil {
			return err
		}
		if ex != nil {
			gd.contam, gd.evalBuilt, gd.longest = hits, ex, ex.Longest
		} else if set, err = evalSet(g.Exclude, g.ExcludeN); err != nil {
			return err
		}
	}
	var prm *dedup.Params
	var det *dedup.Detector
	var exact dedup.Exact
	targetKeys := p.targetKeys()
	d, err := p.indexDups(ctx)
	if err != nil {
		return err
	}
	if d != nil {
		gd.cluster = p.indexClusters(targetKeys, gd)
		gd.exactDups, gd.bands, gd.built = int(d.ExactDuplicates), d.Bands, d
	} else if !g.KeepDuplicates {
		fp := dedup.ForThreshold(orDefault(g.NearDup, DefaultNearDup))
		gd.bands, prm = fp.Bands, &fp
		var err error
		if det, err = dedup.NewDetector(*prm); err != nil {
			return err
		}
	}
	if det == nil && set == nil {
		gd.groups = countGroups(p.ix.NumRows(), gd.cluster)
		p.guards = gd
		p.chargeGuards()
		return nil
	}
	plan := hashPlan{prm: prm, set: set}
	if det != nil && p.ix.HasKeys() {
		// The keys are stored (a set of segments that found duplicates): the repeats of a key are
		// joined to its first row now, and only first rows are signed and given to the Detector,
		// as a build does (TestDupsMatchDetector holds that the clusters are the same).
		plan.repeat, gd.keyed = p.keyedRepeats(det.Clusters(), targetKeys, gd), true
	}
	var pairs []dedup.Pair
	// Hashing, signing and checking words are per row and run on every core; the detector and the
	// exact groups take the rows in order, as they must.
	work, err := eachRowHashed(ctx, p.ix, plan, func(h *rowHashes) error {
		if h.contaminated {
			gd.contam[h.row] = h.hit
		}
		gd.evalWork += h.words
		gd.longest = max(gd.longest, int(h.words))
		if det == nil {
			return nil
		}
		if plan.repeat != nil {
			if h.sig == nil {
				return nil // a repeat, joined to its first already
			}
			var err error
			pairs, err = det.Add(pairs[:0], h.row, h.sig)
			return err
		}
		if targetKeys[h.key] {
			gd.addInPool(p.ix, h.row)
		}
		first, err := exact.Add(h.row, h.key)
		if err != nil {
			return err
		}
		if pairs, err = det.Add(pairs[:0], h.row, h.sig); err != nil {
			return err
		}
		if first != h.row {
			gd.exactDups++
			return det.Clusters().Union(first, h.row)
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("look for duplicates and evaluation rows: %w", err)
	}
	if det != nil {
		gd.cluster = det.Clusters().Find
		gd.work = work.Plus(det.Work())
	}
	gd.groups = countGroups(p.ix.NumRows(), gd.cluster)
	p.guards = gd
	p.chargeGuards()
	return nil
}

// keyedRepeats reads every row's stored key in order, joins each row whose key an earlier row has to
// that row in c, and returns them as a bitmap; it counts them, and names the pool rows a target row
// has the key of, in gd.
func (p *picked) keyedRepeats(c *dedup.Clusters, targetKeys map[dedup.Key]bool, gd *guarded) []uint64 {
	n := p.ix.NumRows()
	repeat := make([]uint64, (n+63)/64)
	var exact dedup.Exact
	for r := range n {
		k, _ := p.ix.DupKey(r)
		if targetKeys[k] {
			gd.addInPool(p.ix, r)
		}
		// Rows are numbers below n, which Add and Union take.
		if first, _ := exact.Add(r, k); first != r {
			repeat[r/64] |= 1 << (r % 64)
			gd.exactDups++
			_ = c.Union(first, r)
		}
	}
	return repeat
}

// indexExcluded returns the index's check of the rows against evaluation files, when it was made
// with the files the pick excludes, the same bytes in the same order, at the same n-gram length;
// nil when the pick must check the rows itself.
func (p *picked) indexExcluded() (*index.Excluded, map[int]decontam.Hit, error) {
	g := p.opt.Guards
	ex, hits, err := p.ix.Contamination()
	if ex == nil || err != nil || ex.N != orDefaultInt(g.ExcludeN, DefaultExcludeN) || len(ex.Files) != len(g.Exclude) {
		return nil, nil, err
	}
	for i, f := range g.Exclude {
		sum, err := index.FileSHA256(f)
		if err != nil {
			return nil, nil, fmt.Errorf("read evaluation file %s: %w", f, err)
		}
		if sum != ex.Files[i].SHA256 {
			return nil, nil, nil
		}
	}
	return ex, hits, nil
}

// indexDups returns what the index says of its duplicates when they were found as this pick would
// find them (dedup.ForThreshold of its --near-dup), and nil when the pick must find them itself: it
// keeps duplicates, or the index was built without them, before them, at another threshold or by
// another version of dedup. A set finds them across its segments from what they stored.
func (p *picked) indexDups(ctx context.Context) (*index.Dups, error) {
	if !p.takesDups(p.ix.DupSettings()) {
		return nil, nil // a set's would be found at other settings: none of its work is wasted
	}
	d, err := p.ix.Duplicates(ctx)
	if err != nil {
		return nil, fmt.Errorf("look for duplicates: %w", err)
	}
	if !p.takesDups(d) {
		return nil, nil
	}
	return d, nil
}

// takesDups reports whether duplicates found as d says are those this pick would find.
func (p *picked) takesDups(d *index.Dups) bool {
	return d != nil && !p.opt.Guards.KeepDuplicates && d.Version == dedup.Version && d.Params() == dedup.ForThreshold(orDefault(p.opt.Guards.NearDup, DefaultNearDup))
}

// indexClusters returns the clusters the index stores, each named by its first row, and counts in
// gd the pool rows whose key a target row has, as the pick's own pass would find them. The
// clusters are read from the index as they are needed, not held.
func (p *picked) indexClusters(targetKeys map[dedup.Key]bool, gd *guarded) func(int) int {
	ix := p.ix
	if len(targetKeys) > 0 {
		for r := range ix.NumRows() {
			if k, _ := ix.DupKey(r); targetKeys[k] {
				gd.addInPool(ix, r)
			}
		}
	}
	// Open has checked that every row's first is itself or an earlier first.
	return func(r int) int { f, _ := ix.DupFirst(r); return f }
}

// addInPool counts row, of ix, as a pool row that is also a target row.
func (gd *guarded) addInPool(ix *index.Index, row int) {
	if gd.inPool++; gd.inPool == 1 {
		gd.inPoolFirst = ix.RowID(row)
	}
}

// countGroups counts the clusters of two rows or more among rows [0, n) in one pass, marking each
// cluster's row once in a bitmap: an eighth of a byte a row, where listing the groups took a slice of
// every row.
func countGroups(n int, cluster func(int) int) int {
	if cluster == nil {
		return 0
	}
	_, groups := dedup.Tally(n, cluster)
	return groups
}

// targetKeys are the exact-duplicate keys of the target rows, of every set, so that target rows
// that also sit in the pool can be named.
func (p *picked) targetKeys() map[dedup.Key]bool {
	keys := map[dedup.Key]bool{}
	if p.sets == nil {
		p.addTargetKeys(keys, p.target, p.targets)
	}
	for _, s := range p.sets {
		p.addTargetKeys(keys, s.ref.Path, s.targets)
	}
	return keys
}

// addTargetKeys adds the keys of the target rows read from file to keys; none if it cannot be read
// again.
func (p *picked) addTargetKeys(keys map[dedup.Key]bool, file string, targets []index.Target) {
	texts, err := targetTexts(file, p.spec)
	if err != nil {
		return
	}
	var h dedup.Hasher
	for _, t := range targets {
		h.Write([]byte(texts[t.Line]))
		keys[h.Sum()] = true
	}
}

// evalSet reads the evaluation files' rows (every string field of each JSON object, or the whole
// line when it is not one) into a set of their word n-grams.
func evalSet(files []string, n int) (*decontam.Set, error) {
	return decontam.ReadFiles(files, n, index.DefaultMaxRowBytes)
}

// chargeGuards enters the guards' work in the ledger.
func (p *picked) chargeGuards() {
	gd := p.guards
	if gd.cluster != nil && gd.built == nil {
		p.led.AddSelection(fmt.Sprintf("find duplicates: exact keys and MinHash signatures (%d hashes, %d bands)", minhashes, gd.bands), "FLOP", gd.work.FLOPs(), 1,
			"the hashing work counted as index/dedup states it: bytes read and hashed, shingles, MinHash evaluations, band probes, sketches compared")
	}
	if gd.evalFiles != nil && gd.evalBuilt == nil {
		per := float64(2 * budget.FLOPsPerToken) // each word hashed twice, one set look-up per n-gram
		p.led.AddSelection("check pool rows against the evaluation files' n-grams", "word", float64(gd.evalWork), per,
			fmt.Sprintf("%g FLOPs x %d words", per, gd.evalWork))
	}
}

// bars bars duplicates, contaminated rows and, through the group caps, rows past their source's
// share; it runs once the scores are known, since a cluster keeps its best-scored row.
func (p *picked) applyGuards() error {
	gd := p.guards
	if gd == nil {
		return nil
	}
	n := p.ix.NumRows()
	bar := func(r int, why selection.Reason) {
		if p.barred == nil {
			p.barred = make([]selection.Reason, n)
		}
		if p.barred[r] == selection.Kept {
			p.barred[r] = why
		}
	}
	for r := range gd.contam {
		bar(r, selection.Contaminated)
	}
	if gd.cluster == nil {
		return nil
	}
	// Each cluster keeps its best-scored row, the earliest on a tie. A contaminated row is never
	// kept, so it must not stand for its cluster either: it scores as NaN, below every number.
	score := func(r int) float64 {
		if p.barred != nil && p.barred[r] != selection.Kept {
			return math.NaN()
		}
		return p.scores[r]
	}
	keeper := dedup.Keepers(n, gd.cluster, score)
	p.dropped = 0
	for r := range n {
		if k := int(keeper[gd.cluster(r)]); k != r {
			p.dropped++
			bar(r, selection.Duplicate)
		}
	}
	p.dupOf = func(r int) int { return int(keeper[gd.cluster(r)]) }
	return nil
}

// groupCaps turns MaxShare into token caps per source for the selection, from the training budget
// left once selection is paid.
func (p *picked) groupCaps(unit, fixed float64) ([]int32, []float64, error) {
	caps, err := p.caps(unit, fixed)
	if caps == nil || err != nil {
		return nil, nil, err
	}
	group := make([]int32, p.ix.NumRows())
	for r := range group {
		group[r] = int32(p.ix.RowLocation(r).Source)
	}
	return group, caps, nil
}

// caps are the token caps per source of MaxShare, nil without it.
func (p *picked) caps(unit, fixed float64) ([]float64, error) {
	shares := p.opt.Guards.MaxShare
	if len(shares) == 0 {
		return nil, nil
	}
	srcs := p.meta().Sources
	byPath := map[string]int{}
	for i, s := range srcs {
		byPath[s.Path] = i
	}
	var unknown []string
	for path := range shares {
		if _, ok := byPath[path]; path != "" && !ok {
			unknown = append(unknown, path)
		}
	}
	if len(unknown) > 0 {
		sort.Strings(unknown)
		var have []string
		for _, s := range srcs {
			have = append(have, s.Path)
		}
		return nil, fmt.Errorf("--max-share names %s, which the index does not hold; its files are %s", strings.Join(unknown, ", "), strings.Join(have, ", "))
	}
	tokens := (p.opt.Budget - fixed) / unit
	caps := make([]float64, len(srcs))
	for i, s := range srcs {
		share, ok := shares[s.Path]
		if !ok {
			share, ok = shares[""]
		}
		if !ok {
			share = 1
		}
		caps[i] = math.Floor(share * tokens)
	}
	return caps, nil
}

// guardNotes say in the ledger what the guards found.
func (p *picked) guardNotes() []string {
	gd := p.guards
	if gd == nil {
		return nil
	}
	var notes []string
	if gd.cluster != nil {
		groups := gd.groups
		notes = append(notes, fmt.Sprintf("duplicates: %d rows have an exact duplicate earlier in the pool; %d clusters of exact or near duplicates (Jaccard of word 5-gram shingles >= %g, %d MinHash values in %d bands); %d rows dropped for a better-scored row of their cluster",
			gd.exactDups, groups, orDefault(p.opt.Guards.NearDup, DefaultNearDup), minhashes, gd.bands, p.dropped))
	}
	if gd.keyed {
		notes = append(notes, "duplicates: the exact keys were read from the segments' dups files, and only the first row of each key was read again and signed")
	}
	if d := gd.built; d != nil {
		notes = append(notes, fmt.Sprintf("duplicates were found when the index was built, which paid their hashing once for every pick at this --near-dup: %s FLOP-equivalents as index/dedup counts it (meta.json's duplicates); this pick charges none of it", budget.FormatFLOPs(d.FLOPs)))
	}
	if x := gd.evalBuilt; x != nil {
		notes = append(notes, fmt.Sprintf("evaluation rows were checked when the index was built, against the same files: %d words, %s FLOP-equivalents at %d a word (meta.json's excluded); this pick charges none of it",
			x.Words, budget.FormatFLOPs(float64(x.Words)*2*budget.FLOPsPerToken), 2*budget.FLOPsPerToken))
	}
	if gd.evalFiles != nil {
		notes = append(notes, fmt.Sprintf("evaluation rows: %d pool rows share a %d-word n-gram with %s and are never kept", len(gd.contam), orDefaultInt(p.opt.Guards.ExcludeN, DefaultExcludeN), strings.Join(gd.evalFiles, ", ")))
	}
	if n := orDefaultInt(p.opt.Guards.ExcludeN, DefaultExcludeN); gd.evalFiles != nil && n > gd.longest {
		notes = append(notes, fmt.Sprintf("evaluation n-grams: --exclude-ngram %d is longer than every pool row (the longest has %d words): a row is found only when its words are an evaluation row's, whole", n, gd.longest))
	}
	if gd.inPool > 0 {
		notes = append(notes, fmt.Sprintf("target rows in the pool: %d pool rows are target rows, the first %s", gd.inPool, gd.inPoolFirst))
	}
	return notes
}

func orDefault(v, d float64) float64 {
	if v == 0 {
		return d
	}
	return v
}

func orDefaultInt(v, d int) int {
	if v == 0 {
		return d
	}
	return v
}

// ParseShares reads source caps as FILE=SHARE, or SHARE for every file without one of its own; a
// share is above 0 and at most 1.
func ParseShares(specs []string) (map[string]float64, error) {
	var out map[string]float64
	for _, s := range specs {
		file, v, ok := strings.Cut(s, "=")
		if !ok {
			file, v = "", s
		}
		f, err := strconv.ParseFloat(v, 64)
		if err != nil || !(f > 0 && f <= 1) {
			return nil, fmt.Errorf("%q: give FILE=SHARE or SHARE, a share above 0 and at most 1", s)
		}
		if out == nil {
			out = map[string]float64{}
		}
		if _, dup := out[file]; dup {
			return nil, fmt.Errorf("%q: that file has a share already", s)
		}
		out[file] = f
	}
	return out, nil
}

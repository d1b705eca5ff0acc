package run

import (
	"bufio"
	"cmp"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"io"
	"math"
	"math/bits"
	"os"
	"path/filepath"
	"slices"

	"sluice/index"
	"sluice/index/atomicdir"
	"sluice/index/dedup"
	selection "sluice/select"
)

// A sharded pick that drops duplicates finds the set's clusters as Index.Duplicates finds them over
// the whole set (the same clusters, counts and work), with no step holding every row:
//
//   - each score step shares its segment's records out by key among as many parts as the set has
//     segments: every row's exact key (exact-PPPP) and, for the rows its build signed (the first
//     of each key in the segment), each band's key (bands-PPPP);
//   - the dups step of part P reads its records from every shard, in row order, and finds what a
//     build's exact pass and, band by band, its dedup.Bulk would among them: rows whose key an
//     earlier row has, each with that row, and candidate pairs, each row with the first row of
//     each bucket it falls in, confirmed from the two rows' stored sketches (dups-PPPP);
//   - the cut joins the pairs of every part into clusters. A Bulk is given no row whose key an
//     earlier row has; the parts give such a row's candidates too (a part cannot know), and the cut
//     drops them: the row's marks are its first's, so it is never the first of a bucket and its
//     confirmed pairs join nothing its first's do not. The cut then keeps, of each cluster, the first
//     row it meets in rank order that is not contaminated, which is the best-scored (ties to the
//     earlier row), as Pick keeps, and names it to each shard's write step (dupof-NNNN).
//
// Memory: a dups step holds the keys of its part (about a segment's rows) and one band's buckets;
// the cut, 12 bytes a row that has a duplicate and the candidate pairs of rows that are not
// repeats while it counts them, not every row.

// shardDups is what a score step found of its segment for the set's duplicates.
type shardDups struct {
	KeyWork  dedup.Work `json:"key_work"`  // the segment's build's keying of every row
	SignWork dedup.Work `json:"sign_work"` // the signing of every row with a sketch record
	Marked   int64      `json:"marked"`    // sketch records with marks (rows with words)
	Exact    []int      `json:"exact"`     // records in each part's exact file
	Bands    [][]int    `json:"bands"`     // records of each band in each part's bands file
	// InPool counts the segment's rows whose key a target row has; InPoolFirst is the first one's id.
	InPool      int    `json:"in_pool,omitempty"`
	InPoolFirst string `json:"in_pool_first,omitempty"`
}

const (
	exactRecSize  = 4 + 16 + 4     // row, key, 1 + the place of its sketch record (0 for none)
	bandRecSize   = 8 + 4 + 4      // band key, row, the place of its sketch record
	repeatRecSize = 4 + 4 + 1 + 24 // row, first, flags, signing work (Bytes, ShingleWords, MinHashes)
	candRecSize   = 4 + 4 + 1      // later row, first row, confirmed
	dupsMark      = "dups.json"
	repeatsFile   = "repeats"
	candsFile     = "candidates"
	partBuf       = 16 << 10 // each part file's write buffer: a score step has two files a part open
)

func exactName(part int) string { return fmt.Sprintf("exact-%04d", part) }
func bandsName(part int) string { return fmt.Sprintf("bands-%04d", part) }
func dupsFolder(work string, part int) string {
	return filepath.Join(work, fmt.Sprintf("dups-%04d", part))
}
func dupOfName(shard int) string { return fmt.Sprintf("dupof-%04d", shard) }

// isPartFile reports whether n is a score step's exact or bands file.
func isPartFile(n string) bool {
	var i int
	if _, err := fmt.Sscanf(n, "exact-%04d", &i); err == nil && n == exactName(i) {
		return true
	}
	_, err := fmt.Sscanf(n, "bands-%04d", &i)
	return err == nil && n == bandsName(i)
}

func dupsKind() atomicdir.Kind {
	return shardKind("duplicates' part", dupsMark, func(n string) bool { return n == repeatsFile || n == candsFile })
}

// partOf is the part a key (well mixed, as SHA-256 bytes and band keys are) falls in.
func partOf(k uint64, parts int) int {
	hi, _ := bits.Mul64(k, uint64(parts))
	return int(hi)
}

// dropsDups reports whether the pick drops duplicates.
func (p *picked) dropsDups() bool { return !p.opt.Guards.KeepDuplicates }

// checkShardDups refuses a set whose duplicates cannot be found from what its segments stored as
// this pick finds them, and returns the segment's settings.
func (p *picked) checkShardDups() (*index.Dups, error) {
	d := p.ix.ShardDups()
	if !p.takesDups(d) {
		return nil, shardErrorf("a sharded pick finds duplicates from what the segments stored when built, and not every segment of %s stored keys and sketches at --near-dup %g made by this sluice (one was built with --no-dups, at another --near-dup or by an older sluice): build those segments again, or give --keep-duplicates",
			p.opt.Index, orDefault(p.opt.Guards.NearDup, DefaultNearDup))
	}
	return d, nil
}

// writeDupKeys writes the segment's records for each part into tmp (the shard's folder dir, being
// written), its duplicates found at d's settings (checkShardDups), recording each file's SHA-256
// in sums, and returns what the cut needs of the segment.
func (p *picked) writeDupKeys(tmp, dir string, d *index.Dups, sums map[string]string) (*shardDups, error) {
	var err error
	shard, of := p.ix.Shard()
	first := p.ix.FirstRow()
	sd := &shardDups{KeyWork: *d.KeyWork, Exact: make([]int, of), Bands: make([][]int, of)}
	for part := range sd.Bands {
		sd.Bands[part] = make([]int, d.Bands)
	}
	files := map[string]*hashedFile{}
	defer func() {
		for _, f := range files {
			f.f.Close()
		}
	}()
	open := func(name string, part int, magic string) (*hashedFile, error) {
		hf, err := createHashed(filepath.Join(tmp, name), partBuf)
		if err != nil {
			return nil, err
		}
		files[name] = hf
		_, err = hf.w.Write(fileHead(magic, shard, of, part, first))
		return hf, err
	}
	exact, bands := make([]*hashedFile, of), make([]*hashedFile, of)
	for part := range of {
		if exact[part], err = open(exactName(part), part, "sluiceEX"); err != nil {
			return nil, err
		}
		if bands[part], err = open(bandsName(part), part, "sluiceBK"); err != nil {
			return nil, err
		}
	}
	targetKeys := p.targetKeys()
	var rec [max(exactRecSize, bandRecSize)]byte
	// writeExact writes row's exact record; place is 1 + its sketch record's place in the file, or
	// 0 for a row the build did not sign (one whose key an earlier row of the segment has).
	writeExact := func(r, place int) {
		key, _ := p.ix.DupKey(r)
		if targetKeys[key] {
			if sd.InPool++; sd.InPool == 1 {
				sd.InPoolFirst = p.ix.RowID(r)
			}
		}
		part := partOf(binary.LittleEndian.Uint64(key[:]), of)
		binary.LittleEndian.PutUint32(rec[:], uint32(first+r))
		copy(rec[4:], key[:])
		binary.LittleEndian.PutUint32(rec[20:], uint32(place))
		exact[part].w.Write(rec[:exactRecSize])
		sd.Exact[part]++
	}
	// A part's bands file holds band 0's records of every row, then band 1's, and so on, so that
	// the dups step holds one band's buckets at a time; the sketches are walked once a band (their
	// pages stay in the page cache), rather than a file a band and part being open at once. Each
	// record carries its sketch record's place, so that a later step finds it without a search.
	next := 0 // the first row whose exact record is not written
	for j := range d.Bands {
		place := 0
		err = p.ix.EachSketch(func(r int, marks []byte, w dedup.Work) error {
			defer func() { place++ }()
			if j == 0 {
				for ; next < r; next++ {
					writeExact(next, 0)
				}
				writeExact(r, place+1)
				next = r + 1
				sd.SignWork = sd.SignWork.Plus(w)
				if len(marks) > 0 {
					sd.Marked++
				}
			}
			if len(marks) == 0 {
				return nil
			}
			k := binary.LittleEndian.Uint64(marks[8*j:])
			part := partOf(k, of)
			binary.LittleEndian.PutUint64(rec[:], k)
			binary.LittleEndian.PutUint32(rec[8:], uint32(first+r))
			binary.LittleEndian.PutUint32(rec[12:], uint32(place))
			bands[part].w.Write(rec[:bandRecSize])
			sd.Bands[part][j]++
			return nil
		})
		if err != nil {
			return nil, err
		}
	}
	for ; next < p.ix.NumRows(); next++ {
		writeExact(next, 0)
	}
	for name, f := range files {
		sum, err := f.finish()
		if err != nil {
			return nil, fmt.Errorf("write %s: %w", filepath.Join(dir, name), err)
		}
		sums[name] = sum
		delete(files, name)
	}
	return sd, nil
}

// DupsShard is a sharded pick's step between the score steps and the cut when it drops
// duplicates: part of the set's keys (of as many as the set has segments) read from every shard and
// searched for duplicates, its pairs written to the work folder's dups-PPPP. With
// --keep-duplicates it has nothing to do.
func DupsShard(ctx context.Context, opt Options, work string, part int) (*ShardReport, error) {
	key, ident, err := startStep(&opt, false)
	if err != nil {
		return nil, err
	}
	heads, err := readShards(work, key, ident)
	if err != nil {
		return nil, err
	}
	of := heads[0].Of
	if part < 0 || part >= of {
		return nil, shardErrorf("--shard %d: the set has %d segments, numbered 0 to %d", part, of, of-1)
	}
	rep := &ShardReport{Step: "dups", Shard: part, Of: of}
	if opt.Guards.KeepDuplicates {
		return rep, nil
	}
	fp := dedup.ForThreshold(orDefault(opt.Guards.NearDup, DefaultNearDup))
	for _, sf := range heads {
		if sf.Dups == nil || len(sf.Dups.Exact) != of || len(sf.Dups.Bands) != of || len(sf.Dups.Bands[part]) != fp.Bands {
			return nil, workErrorf("shard %d of %d: its summary has no records for the search for duplicates: score it again", sf.Shard, of)
		}
	}
	sk, err := index.OpenSetSketches(opt.Index)
	if err != nil {
		return nil, err
	}
	defer sk.Close()
	dir := dupsFolder(work, part)
	df := &dupsFile{Format: shardFormat, Sluice: opt.Version, Identity: ident, Options: key, Part: part, Of: of, Files: map[string]string{}}
	err = publishWork(dir, dupsKind(), []string{opt.Index, opt.Target}, func(tmp string) error {
		fills := []workFill{
			{repeatsFile, func(w *bufio.Writer) error { return findRepeats(ctx, w, work, heads, part, sk, &df.Repeats) }},
			{candsFile, func(w *bufio.Writer) error { return findCandidates(ctx, w, work, heads, part, sk, fp, &df.Candidates) }},
		}
		return writeWork(tmp, dir, fills, df.Files, dupsMark, df)
	})
	if err != nil {
		return nil, err
	}
	rep.Rows, rep.Wrote = df.Repeats+df.Candidates, dir
	return rep, nil
}

// dupsFile is dups.json: what a dups step found in its part.
type dupsFile struct {
	Format     string            `json:"format"`
	Sluice     string            `json:"sluice"`
	Identity   string            `json:"identity"`
	Options    string            `json:"options"`
	Part       int               `json:"part"`
	Of         int               `json:"of"`
	Repeats    int               `json:"repeats"`
	Candidates int               `json:"candidates"`
	Files      map[string]string `json:"files"`
}

// partRecords reads one shard's file of part, a record at a time, checking that the rows of each
// run of records the caller reads (a band's, or the whole file) ascend and are the shard's.
type partRecords struct {
	*recordFile
	sf   *shardFile
	last int
}

func openPart(work string, sf *shardFile, part int, name func(int) string, magic string, size, records int) (*partRecords, error) {
	path := filepath.Join(shardFolder(work, sf.Shard), name(part))
	rf, err := openRecordsHead(path, magic, sf.Shard, sf.Of, part, records, size, sf.Files[name(part)], partBuf)
	if err != nil {
		return nil, err
	}
	return &partRecords{recordFile: rf, sf: sf, last: -1}, nil
}

// each reads n records and calls fn with each and its row (the uint32 at rowAt).
func (pr *partRecords) each(ctx context.Context, n, rowAt int, fn func(rec []byte, row int) error) error {
	for k := range n {
		if k%(1<<16) == 0 && ctx.Err() != nil {
			return fmt.Errorf("duplicates: %w", ctx.Err())
		}
		if ok, err := pr.next(); err != nil || !ok {
			return cmp.Or(err, workErrorf("shard %d of %d: %s is damaged: it ends early", pr.sf.Shard, pr.sf.Of, pr.path))
		}
		row := int(binary.LittleEndian.Uint32(pr.rec[rowAt:]))
		if row < max(pr.last, pr.sf.FirstRow) || row >= pr.sf.FirstRow+pr.sf.Rows {
			return workErrorf("shard %d of %d: %s is damaged: row %d is out of place", pr.sf.Shard, pr.sf.Of, pr.path, row)
		}
		pr.last = row
		if err := fn(pr.rec, row); err != nil {
			return err
		}
	}
	return nil
}

// end checks that the file holds no more records and its sum is its summary's.
func (pr *partRecords) end() error {
	_, err := pr.next()
	pr.Close()
	return err
}

// findRepeats finds the rows of part whose exact key an earlier row has and writes each with that
// row and, when it has a sketch record, what signing it cost.
func findRepeats(ctx context.Context, w *bufio.Writer, work string, heads []*shardFile, part int, sk *index.SetSketches, count *int) error {
	firsts := map[dedup.Key]uint32{}
	var out [repeatRecSize]byte
	fn := func(rec []byte, row int) error {
		key := dedup.Key(rec[4 : 4+len(dedup.Key{})]) // after the row, as exactRecSize lays it out
		f, seen := firsts[key]
		if !seen {
			firsts[key] = uint32(row)
			return nil
		}
		clear(out[:])
		var sw dedup.Work
		if place := int(binary.LittleEndian.Uint32(rec[20:])); place > 0 {
			marks, w, err := sk.Record(row, place-1)
			if err != nil {
				return err
			}
			sw, out[8] = w, 1
			if len(marks) > 0 {
				out[8] |= 2
			}
		}
		binary.LittleEndian.PutUint32(out[0:], uint32(row))
		binary.LittleEndian.PutUint32(out[4:], f)
		binary.LittleEndian.PutUint64(out[9:], uint64(sw.Bytes))
		binary.LittleEndian.PutUint64(out[17:], uint64(sw.ShingleWords))
		binary.LittleEndian.PutUint64(out[25:], uint64(sw.MinHashes))
		*count++
		_, err := w.Write(out[:])
		return err
	}
	for _, sf := range heads {
		pr, err := openPart(work, sf, part, exactName, "sluiceEX", exactRecSize, sf.Dups.Exact[part])
		if err != nil {
			return err
		}
		if err := pr.each(ctx, sf.Dups.Exact[part], 0, fn); err != nil {
			pr.Close()
			return err
		}
		if err := pr.end(); err != nil {
			return err
		}
	}
	return nil
}

// findCandidates finds, among the band keys of part, each row's candidate pairs with the first row
// of each bucket it falls in, as a dedup.Bulk does, one band at a time: every shard's records of
// the band, in shard order and so in row order, then the next band's. It writes each pair once with
// whether the rows' sketches confirm it.
func findCandidates(ctx context.Context, w *bufio.Writer, work string, heads []*shardFile, part int, sk *index.SetSketches, fp dedup.Params, count *int) error {
	readers := make([]*partRecords, len(heads))
	defer func() {
		for _, pr := range readers {
			if pr != nil {
				pr.Close()
			}
		}
	}()
	for i, sf := range heads {
		n := 0
		for _, c := range sf.Dups.Bands[part] {
			n += c
		}
		var err error
		if readers[i], err = openPart(work, sf, part, bandsName, "sluiceBK", bandRecSize, n); err != nil {
			return err
		}
	}
	// A bucket's first row and its sketch record's place; a candidate pair and both places.
	type bucket struct{ row, place uint32 }
	type cand struct {
		pair             uint64 // later<<32 | first
		laterAt, firstAt uint32 // their places
	}
	firsts := map[uint64]bucket{}
	var cands []cand
	for j := range fp.Bands {
		clear(firsts)
		for i, pr := range readers {
			pr.last = -1
			err := pr.each(ctx, heads[i].Dups.Bands[part][j], 8, func(rec []byte, row int) error {
				k, place := binary.LittleEndian.Uint64(rec), binary.LittleEndian.Uint32(rec[12:])
				if f, seen := firsts[k]; !seen {
					firsts[k] = bucket{uint32(row), place}
				} else if int(f.row) != row {
					cands = append(cands, cand{uint64(row)<<32 | uint64(f.row), place, f.place})
				}
				return nil
			})
			if err != nil {
				return err
			}
		}
	}
	for i, pr := range readers {
		readers[i] = nil
		if err := pr.end(); err != nil {
			return err
		}
	}
	clear(firsts)
	slices.SortFunc(cands, func(a, b cand) int { return cmp.Compare(a.pair, b.pair) })
	cands = slices.CompactFunc(cands, func(a, b cand) bool { return a.pair == b.pair })
	var out [candRecSize]byte
	for i, c := range cands {
		if i%(1<<16) == 0 && ctx.Err() != nil {
			return fmt.Errorf("duplicates: %w", ctx.Err())
		}
		later, first := int(c.pair>>32), int(uint32(c.pair))
		ml, _, err := sk.Record(later, int(c.laterAt))
		if err != nil {
			return err
		}
		mf, _, err := sk.Record(first, int(c.firstAt))
		if err != nil {
			return err
		}
		if len(ml) == 0 || len(mf) == 0 {
			return workErrorf("duplicates: part %d: rows %d and %d share a bucket but have no stored marks: the set changed since it was scored", part, first, later)
		}
		binary.LittleEndian.PutUint32(out[0:], uint32(later))
		binary.LittleEndian.PutUint32(out[4:], uint32(first))
		out[8] = 0
		if dedup.MarksSimilarity(ml, mf, fp.Bands) >= fp.Threshold {
			out[8] = 1
		}
		if _, err := w.Write(out[:]); err != nil {
			return err
		}
	}
	*count = len(cands)
	return nil
}

// shardClusters is what the cut knows of the set's duplicates: the rows that have one, ascending,
// each one's cluster (the place in rows of its least row, which names the cluster as
// dedup.Clusters names it by its first), and, as the walk meets them, the row kept of each cluster.
// 12 bytes a row that has a duplicate, nothing for the others.
type shardClusters struct {
	rows []uint32
	root []uint32
	keep []uint32 // by the place of a cluster's least row; noKeeper until the walk meets one
}

const noKeeper = math.MaxUint32

// clustersOf joins the pairs of rows in edges (each row<<32 | other) into clusters.
func clustersOf(edges []uint64) *shardClusters {
	c := &shardClusters{}
	for _, e := range edges {
		c.rows = append(c.rows, uint32(e>>32), uint32(e))
	}
	slices.Sort(c.rows)
	c.rows = slices.Clip(slices.Compact(c.rows))
	// The forest is over places in rows, which ascend with the rows, so a cluster's root is its
	// least row, as over rows; it holds 4 bytes a place where over rows it would hold 4 a pool row.
	var cl dedup.Clusters
	for _, e := range edges {
		a, _ := slices.BinarySearch(c.rows, uint32(e>>32))
		b, _ := slices.BinarySearch(c.rows, uint32(e))
		_ = cl.Union(a, b) // places below len(rows), which Union takes
	}
	c.root = make([]uint32, len(c.rows))
	for i := range c.root {
		c.root[i] = uint32(cl.Find(i))
	}
	c.keep = make([]uint32, len(c.rows))
	c.restart()
	return c
}

// at returns the place of row's cluster's least row, or false for a row without a duplicate.
func (c *shardClusters) at(row int) (uint32, bool) {
	i, found := slices.BinarySearch(c.rows, uint32(row))
	if !found {
		return 0, false
	}
	return c.root[i], true
}

func (c *shardClusters) restart() {
	for i := range c.keep {
		c.keep[i] = noKeeper
	}
}

// cutDups reads every part's pairs, joins them into clusters and fills gd as a pick over the set
// that takes the set's duplicates fills it: the counts, the work, the clusters.
func (p *picked) cutDups(work string, heads []*shardFile, gd *guarded) error {
	of := heads[0].Of
	fp := dedup.ForThreshold(orDefault(p.opt.Guards.NearDup, DefaultNearDup))
	d := &index.Dups{Threshold: fp.Threshold, Shingle: fp.Shingle, Hashes: fp.Hashes, Bands: fp.Bands, Seed: fp.Seed, Version: dedup.Version}
	var keyWork, signWork dedup.Work
	var marked int64
	for _, sf := range heads {
		if sf.Dups == nil {
			return workErrorf("shard %d of %d was scored keeping duplicates: score it again with these flags", sf.Shard, of)
		}
		keyWork, signWork, marked = keyWork.Plus(sf.Dups.KeyWork), signWork.Plus(sf.Dups.SignWork), marked+sf.Dups.Marked
		if sf.Dups.InPool > 0 {
			if gd.inPool == 0 {
				gd.inPoolFirst = sf.Dups.InPoolFirst
			}
			gd.inPool += sf.Dups.InPool
		}
	}
	rows := int(heads[0].Meta.Rows)
	parts := make([]*dupsFile, of)
	for part := range of {
		df := &dupsFile{}
		dir := dupsFolder(work, part)
		what := fmt.Sprintf("duplicates' part %d of %d (run its dups step)", part, of)
		if _, err := readJSON(filepath.Join(dir, dupsMark), what, df); err != nil {
			return err
		}
		if df.Format != shardFormat || df.Identity != heads[0].Identity || df.Options != heads[0].Options || df.Part != part || df.Of != of {
			return workErrorf("duplicates' part %d of %d: %s was made by another pick or over another set: run its dups step again", part, of, dir)
		}
		parts[part] = df
	}
	// Every part's repeats first, so that the candidate pairs of a repeat, which a Bulk never
	// compares (see above), are dropped as they are read rather than held.
	var edges []uint64
	var repeats []uint32
	for part, df := range parts {
		path := filepath.Join(dupsFolder(work, part), repeatsFile)
		err := eachRecord(path, df.Repeats, repeatRecSize, df.Files[repeatsFile], func(b []byte) error {
			row, first := binary.LittleEndian.Uint32(b), binary.LittleEndian.Uint32(b[4:])
			if first >= row || int(row) >= rows {
				return workErrorf("duplicates' part %d: %s is damaged: row %d repeats row %d", part, path, row, first)
			}
			repeats = append(repeats, row)
			edges = append(edges, uint64(row)<<32|uint64(first))
			if b[8]&1 != 0 {
				signWork = signWork.Minus(dedup.Work{Bytes: int64(binary.LittleEndian.Uint64(b[9:])),
					ShingleWords: int64(binary.LittleEndian.Uint64(b[17:])), MinHashes: int64(binary.LittleEndian.Uint64(b[25:]))})
			}
			if b[8]&2 != 0 {
				marked--
			}
			return nil
		})
		if err != nil {
			return err
		}
	}
	slices.Sort(repeats)
	for i := 1; i < len(repeats); i++ {
		if repeats[i] == repeats[i-1] {
			return workErrorf("duplicates: row %d is a repeat in two parts: run the dups steps again", repeats[i])
		}
	}
	// A pair found in two parts (two bands) counts once, as in a Bulk. The confirmed pairs of a
	// repeat are dropped with the rest: they join rows its first's pairs join.
	var cands []uint64
	for part, df := range parts {
		path := filepath.Join(dupsFolder(work, part), candsFile)
		err := eachRecord(path, df.Candidates, candRecSize, df.Files[candsFile], func(b []byte) error {
			later, first := binary.LittleEndian.Uint32(b), binary.LittleEndian.Uint32(b[4:])
			if first >= later || int(later) >= rows {
				return workErrorf("duplicates' part %d: %s is damaged: rows %d and %d", part, path, first, later)
			}
			if _, rep := slices.BinarySearch(repeats, later); rep {
				return nil
			}
			pair := uint64(later)<<32 | uint64(first)
			cands = append(cands, pair)
			if b[8]&1 != 0 {
				edges = append(edges, pair)
			}
			return nil
		})
		if err != nil {
			return err
		}
	}
	slices.Sort(cands)
	compared := int64(len(slices.Compact(cands)))
	cands = nil
	found := dedup.Work{BandValues: marked * int64(d.Hashes), Probes: marked * int64(d.Bands), Compared: compared * int64(d.Hashes)}
	d.ExactDuplicates = int64(len(repeats))
	kw := keyWork
	d.KeyWork = &kw
	d.Work = keyWork.Plus(signWork).Plus(found)
	d.FLOPs = d.Work.FLOPs()
	c := clustersOf(edges)
	dups, clusters := dedup.Tally(len(c.rows), func(i int) int { return int(c.root[i]) })
	d.Duplicates, d.Clusters = int64(dups), int64(clusters)
	gd.cluster = func(r int) int {
		if at, ok := c.at(r); ok {
			return int(c.rows[at])
		}
		return r
	}
	gd.groups, gd.exactDups, gd.bands, gd.built = int(d.Clusters), int(d.ExactDuplicates), d.Bands, d
	p.dropped = int(d.Duplicates)
	p.clusters = c
	return nil
}

// eachRecord reads the n records of size bytes of path, checked against its SHA-256 sum.
func eachRecord(path string, n, size int, sum string, fn func([]byte) error) error {
	f, err := os.Open(path)
	if err != nil {
		return workErrorf("%s is missing or unreadable: %v", path, err)
	}
	defer f.Close()
	h := sha256.New()
	r := bufio.NewReaderSize(io.TeeReader(f, h), mergeBuf)
	b := make([]byte, size)
	for range n {
		if _, err := io.ReadFull(r, b); err != nil {
			return workErrorf("%s is damaged: it ends early (%v)", path, err)
		}
		if err := fn(b); err != nil {
			return err
		}
	}
	if k, _ := r.Read(b[:1]); k > 0 {
		return workErrorf("%s is damaged: it runs on past its records", path)
	}
	if got := hex.EncodeToString(h.Sum(nil)); got != sum {
		return workErrorf("%s is damaged: SHA-256 %.12s, its summary says %.12s", path, got, sum)
	}
	return nil
}

// cutBar is why the cut bars row, met in rank order: contaminated, a duplicate of a row of its
// cluster met before it, or not at all.
func (p *picked) cutBar(row int) selection.Reason {
	if why := p.guardBar(row); why != selection.Kept || p.clusters == nil {
		return why
	}
	c := p.clusters
	at, ok := c.at(row)
	switch {
	case !ok:
		return selection.Kept // alone
	case c.keep[at] == noKeeper:
		c.keep[at] = uint32(row)
		return selection.Kept
	case c.keep[at] == uint32(row):
		return selection.Kept
	}
	return selection.Duplicate
}

// keeperOf is the row kept instead of row, barred as a duplicate by cutBar.
func (p *picked) keeperOf(row int) int {
	at, _ := p.clusters.at(row)
	return int(p.clusters.keep[at])
}

// restartBar forgets the rows cutBar has met, for another walk from the top.
func (p *picked) restartBar() {
	if p.clusters != nil {
		p.clusters.restart()
	}
}

// writeDupOf writes, for each shard, its rows barred as duplicates and the id of each one's row
// kept instead (rows of any segment, read with index.RowIDs), in row order.
func (p *picked) writeDupOf(tmp, dir string, heads []*shardFile, dups [][]uint64, sums map[string]string) error {
	var keepers []int
	for _, ds := range dups {
		for _, d := range ds {
			keepers = append(keepers, int(uint32(d)))
		}
	}
	slices.Sort(keepers)
	keepers = slices.Compact(keepers)
	ids, err := index.RowIDs(p.opt.Index, keepers)
	if err != nil {
		return err
	}
	for i, ds := range dups {
		slices.Sort(ds)
		name := dupOfName(i)
		sums[name], err = writeHashed(filepath.Join(tmp, name), filepath.Join(dir, name), func(w *bufio.Writer) error {
			w.Write(fileHead("sluiceDO", i, heads[i].Of, len(ds), heads[i].FirstRow))
			var b []byte
			for _, d := range ds {
				at, _ := slices.BinarySearch(keepers, int(uint32(d)))
				b = binary.LittleEndian.AppendUint32(b[:0], uint32(d>>32))
				b = binary.AppendUvarint(b, uint64(len(ids[at])))
				b = append(b, ids[at]...)
				if _, err := w.Write(b); err != nil {
					return err
				}
			}
			return nil
		})
		if err != nil {
			return err
		}
	}
	return nil
}

// loadDupOf reads the cut's ids of the rows kept instead of the shard's duplicates.
func (p *picked) loadDupOf(work string, sf *shardFile, cf *cutFile) error {
	name := dupOfName(sf.Shard)
	path := filepath.Join(work, cutName, name)
	b, err := os.ReadFile(path)
	if err != nil {
		return workErrorf("shard %d of %d: %s is missing or unreadable: %v", sf.Shard, sf.Of, path, err)
	}
	sum := sha256.Sum256(b)
	if hex.EncodeToString(sum[:]) != cf.Files[name] || len(b) < fileHeadSize || string(b[:8]) != "sluiceDO" || int(binary.LittleEndian.Uint32(b[8:])) != sf.Shard {
		return workErrorf("shard %d of %d: %s is damaged or another pick's", sf.Shard, sf.Of, path)
	}
	n := binary.LittleEndian.Uint64(b[16:])
	b = b[fileHeadSize:]
	p.dupIDs = make(map[int]string, min(n, uint64(len(b)/5)))
	for range n {
		if len(b) < 5 {
			return workErrorf("shard %d of %d: %s is damaged: it ends early", sf.Shard, sf.Of, path)
		}
		r := int(binary.LittleEndian.Uint32(b))
		l, k := binary.Uvarint(b[4:])
		if k <= 0 || uint64(len(b)-4-k) < l {
			return workErrorf("shard %d of %d: %s is damaged: it ends early", sf.Shard, sf.Of, path)
		}
		p.dupIDs[r] = string(b[4+k : 4+k+int(l)])
		b = b[4+k+int(l):]
	}
	for r, d := range p.dec {
		if _, ok := p.dupIDs[r]; d.Reason == selection.Duplicate && !ok {
			return workErrorf("shard %d of %d: %s names no row kept instead of row %d", sf.Shard, sf.Of, path, r)
		}
	}
	return nil
}

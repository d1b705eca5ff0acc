package run

import (
	"bufio"
	"cmp"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"hash"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"

	"sluice/budget"
	"sluice/index"
	"sluice/index/atomicdir"
	"sluice/score"
	selection "sluice/select"
)

// cutFile is cut.json: what the cut decided, for the steps after it.
type cutFile struct {
	Format     string   `json:"format"`
	Sluice     string   `json:"sluice"`
	Identity   string   `json:"identity"`
	Options    string   `json:"options"`
	Of         int      `json:"of"`
	Rows       int      `json:"rows"`
	Kept       int      `json:"kept"`
	KeptTokens int64    `json:"kept_tokens"`
	Stop       string   `json:"stop"`
	Settings   Settings `json:"settings"`
	// Dups is what the search for the set's duplicates found, as Index.Duplicates of the set says it.
	Dups  *index.Dups       `json:"dups,omitempty"`
	Files map[string]string `json:"files"` // SHA-256 of ledger.json and each shard's decisions
}

func cutKind() atomicdir.Kind {
	return shardKind("cut", cutMark, func(n string) bool {
		var i int
		_, err := fmt.Sscanf(n, "decisions-%04d", &i)
		if n == LedgerFile || (err == nil && n == decisionsName(i)) {
			return true
		}
		_, err = fmt.Sscanf(n, "dupof-%04d", &i)
		return err == nil && n == dupOfName(i)
	})
}

// readShards reads every shard's summary and refuses, naming the shard, one that is missing or
// damaged, or that ran another pick, over another set or with other statistics than shard 0.
func readShards(work, key, ident string) ([]*shardFile, error) {
	var heads []*shardFile
	var meta0 []byte
	for i := 0; i == 0 || i < heads[0].Of; i++ {
		sf := &shardFile{}
		what := fmt.Sprintf("shard %d", i)
		if i > 0 {
			what = fmt.Sprintf("shard %d of %d", i, heads[0].Of)
		}
		if _, err := readJSON(filepath.Join(shardFolder(work, i), shardMark), what+" (run its score step)", sf); err != nil {
			return nil, err
		}
		meta, _ := json.Marshal(sf.Meta)
		switch {
		case sf.Format != shardFormat || sf.Shard != i:
			return nil, workErrorf("%s: %s is not shard %d's summary", what, shardFolder(work, i), i)
		case sf.Identity != ident:
			return nil, workErrorf("%s was scored over another index set (identity %.12s; the set is now %.12s): score it again", what, sf.Identity, ident)
		case sf.Options != key:
			return nil, workErrorf("%s was scored with other flags, another target or other evaluation files (--exclude, by content): give every step the same pick flags and files", what)
		case i > 0 && sf.Of != heads[0].Of:
			return nil, workErrorf("%s says the set has %d segments", what, sf.Of)
		case i > 0 && (sf.Stats != heads[0].Stats || string(meta) != string(meta0)):
			return nil, workErrorf("%s used other statistics of the set than shard 0 (rows, lengths or document frequencies): score both again", what)
		case i > 0 && (sf.Work.Passes != heads[0].Work.Passes || sf.Targets != heads[0].Targets || !slices.Equal(sf.Lines, heads[0].Lines)):
			return nil, workErrorf("%s read the target otherwise than shard 0: score both again", what)
		case i > 0 && sf.FirstRow != heads[i-1].FirstRow+heads[i-1].Rows:
			return nil, workErrorf("%s starts at row %d, not after shard %d's rows", what, sf.FirstRow, i-1)
		}
		if i == 0 {
			meta0 = meta
		} else {
			sf.Meta = index.Meta{} // the set's, as shard 0's: one copy, not one a shard
		}
		heads = append(heads, sf)
	}
	if last := heads[len(heads)-1]; int64(last.FirstRow+last.Rows) != heads[0].Meta.Rows {
		return nil, workErrorf("the shards hold %d rows, the set %d", last.FirstRow+last.Rows, heads[0].Meta.Rows)
	}
	return heads, nil
}

// rankHead is one shard's next row in the merge.
type rankHead struct {
	score  float64
	row    uint32
	source uint32
	tokens uint64
	shard  int
}

// merge streams the shards' rankings as one, ranked as Pick ranks (score descending, NaN last,
// then row ascending): a heap of one head per shard, so its memory grows with shards, not rows.
// The heap is kept by hand rather than through container/heap, whose interface would box a row at
// every step.
type merge struct {
	files []*recordFile
	heads []*shardFile
	heap  []rankHead
	last  []rankHead // each shard's row read last, which the next must rank after
}

// before reports whether a ranks ahead of b.
func before(a, b *rankHead) bool {
	return cmp.Or(cmp.Compare(b.score, a.score), cmp.Compare(a.row, b.row)) < 0
}

// mergeBuf is each ranking's read buffer.
const mergeBuf = 64 << 10

func openMerge(work string, heads []*shardFile) (*merge, error) {
	m := &merge{heads: heads, heap: make([]rankHead, 0, len(heads)), last: make([]rankHead, len(heads))}
	for i, sf := range heads {
		rf, err := openRecords(filepath.Join(shardFolder(work, i), rankingFile), "sluiceRK", i, sf.Of, sf.Rows, rankRecSize, sf.Files[rankingFile], mergeBuf)
		if err != nil {
			m.Close()
			return nil, err
		}
		m.files = append(m.files, rf)
		var h rankHead
		ok, err := m.read(i, &h)
		if err != nil {
			m.Close()
			return nil, err
		}
		if ok {
			m.heap = append(m.heap, h)
		}
	}
	for i := len(m.heap)/2 - 1; i >= 0; i-- {
		m.down(i)
	}
	return m, nil
}

// read reads shard i's next row into h, or reports false when its ranking is spent (and checked).
func (m *merge) read(i int, h *rankHead) (bool, error) {
	rf := m.files[i]
	ok, err := rf.next()
	if !ok || err != nil {
		return false, err
	}
	b := rf.rec
	*h = rankHead{score: math.Float64frombits(binary.LittleEndian.Uint64(b)), row: binary.LittleEndian.Uint32(b[8:]),
		source: binary.LittleEndian.Uint32(b[12:]), tokens: binary.LittleEndian.Uint64(b[16:]), shard: i}
	// A file whose sum matches may still have been made otherwise than by the score step: its rows
	// must be the shard's, each ranked after the one before, or the merge would walk them wrongly.
	sf := m.heads[i]
	if int64(h.row) < int64(sf.FirstRow) || int64(h.row) >= int64(sf.FirstRow+sf.Rows) || math.IsNaN(h.score) ||
		(rf.left < sf.Rows-1 && !before(&m.last[i], h)) {
		return false, workErrorf("shard %d: %s is not a ranking of its rows: row %d (score %v) is out of place", i, rf.path, h.row, h.score)
	}
	m.last[i] = *h
	return true, nil
}

// down moves the head at i down to its place.
func (m *merge) down(i int) {
	h := m.heap
	for {
		l := 2*i + 1
		if l >= len(h) {
			return
		}
		c := l
		if r := l + 1; r < len(h) && before(&h[r], &h[l]) {
			c = r
		}
		if !before(&h[c], &h[i]) {
			return
		}
		h[i], h[c] = h[c], h[i]
		i = c
	}
}

// next returns the best row left, or false when every ranking is spent (and checked).
func (m *merge) next() (rankHead, bool, error) {
	if len(m.heap) == 0 {
		return rankHead{}, false, nil
	}
	top := m.heap[0]
	ok, err := m.read(top.shard, &m.heap[0])
	if err != nil {
		return top, false, err
	}
	if !ok {
		last := len(m.heap) - 1
		m.heap[0] = m.heap[last]
		m.heap = m.heap[:last]
	}
	m.down(0)
	return top, true, nil
}

func (m *merge) Close() {
	for _, f := range m.files {
		f.Close()
	}
}

// CutShards is a sharded pick's cut, after the score and dups steps: it reads every shard's
// summary and the set's clusters of duplicates, merges the shards' rankings and walks them as Pick
// walks its ranking, and writes the work folder's cut: each shard's decisions, in its ranking's
// order, the ids of the rows kept instead of its duplicates, and the ledger.
func CutShards(ctx context.Context, opt Options, work string) (*ShardReport, error) {
	key, ident, err := startStep(&opt, false)
	if err != nil {
		return nil, err
	}
	heads, err := readShards(work, key, ident)
	if err != nil {
		return nil, err
	}
	h0 := heads[0]
	p := &picked{opt: &opt, spec: h0.Spec, tid: h0.TargetID, cut: &cutInputs{meta: h0.Meta, targets: h0.Targets, targetsRejected: h0.TargetsRejected}}
	p.led = &budget.Ledger{Budget: opt.Budget, Lines: slices.Clone(h0.Lines)}
	w := score.Work{Passes: h0.Work.Passes}
	for _, sf := range heads {
		w.Postings += sf.Work.Postings
	}
	p.chargeLexical(opt.Params, "", w)
	if err := p.cutGuards(work, heads); err != nil {
		return nil, err
	}
	unit, err := p.unit()
	if err != nil {
		return nil, err
	}
	so := opt.Select
	so.Budget, so.Fixed, so.Unit = opt.Budget, p.led.Selection(), unit
	if so.Caps, err = p.caps(unit, so.Fixed); err != nil {
		return nil, err
	}
	if opt.MinScore.Kind != "" {
		n, lo, err := p.matched(ctx, work, heads)
		if err != nil {
			return nil, err
		}
		so.MinScore, err = cutMinScore(work, heads, opt.MinScore, n, lo, p.cutBar)
		p.restartBar()
		if err != nil {
			return nil, err
		}
		opt.Select.MinScore = so.MinScore
		p.led.Notes = append(p.led.Notes, fmt.Sprintf("min-score: %s of the scored rows, %v", opt.MinScore, so.MinScore))
	}
	dir := filepath.Join(work, cutName)
	cf := &cutFile{Format: shardFormat, Sluice: opt.Version, Identity: ident, Options: key, Of: h0.Of, Rows: int(h0.Meta.Rows), Files: map[string]string{}}
	if p.guards != nil {
		cf.Dups = p.guards.built
	}
	err = publishWork(dir, cutKind(), []string{opt.Index, opt.Target}, func(tmp string) error {
		sum, err := p.walkShards(ctx, work, tmp, heads, so, cf)
		if err != nil {
			return err
		}
		p.led.Stop = stopText(sum, so)
		if sum.Stop == selection.StopMinScore && opt.MinScore.Kind != "" {
			p.led.Stop += " (" + opt.MinScore.String() + ")"
		}
		p.finish(unit, sum)
		cf.Kept, cf.KeptTokens, cf.Stop, cf.Settings = sum.Kept, p.out.KeptTokens, p.led.Stop, p.out.Settings
		if cf.Files[LedgerFile], err = writeHashed(filepath.Join(tmp, LedgerFile), filepath.Join(dir, LedgerFile),
			func(w *bufio.Writer) error { return writeLedger(w, p.led) }); err != nil {
			return err
		}
		return writeJSON(filepath.Join(tmp, cutMark), filepath.Join(dir, cutMark), cf)
	})
	if err != nil {
		return nil, err
	}
	return &ShardReport{Step: "cut", Shard: -1, Of: h0.Of, Rows: cf.Rows, Kept: cf.Kept, KeptTokens: cf.KeptTokens, Stop: cf.Stop, Wrote: dir}, nil
}

// walkShards walks the merged rankings with a Walker, writing each row's decision to its shard's
// decisions file in tmp and tallying what was kept, as tally does for a pick.
func (p *picked) walkShards(ctx context.Context, work, tmp string, heads []*shardFile, so selection.Options, cf *cutFile) (selection.Summary, error) {
	m, err := openMerge(work, heads)
	if err != nil {
		return selection.Summary{}, err
	}
	defer m.Close()
	outs := make([]*hashedFile, len(heads))
	defer func() {
		for _, o := range outs {
			if o != nil {
				o.f.Close()
			}
		}
	}()
	for i, sf := range heads {
		if outs[i], err = createHashed(filepath.Join(tmp, decisionsName(i)), mergeBuf); err != nil {
			return selection.Summary{}, err
		}
		outs[i].w.Write(fileHead("sluiceDC", i, sf.Of, sf.Rows, sf.FirstRow))
	}
	r := &p.out
	r.Sources = make([]SourceTally, len(p.cut.meta.Sources))
	for i, src := range p.cut.meta.Sources {
		r.Sources[i].File = src.Path
	}
	r.Dropped = map[string]int{}
	walker := selection.NewWalker(so)
	var rec [decRecSize]byte
	// Each shard's rows barred as duplicates: the row in the shard and the row kept instead.
	var dups [][]uint64
	if p.clusters != nil {
		dups = make([][]uint64, len(heads))
	}
	for n := 0; ; n++ {
		if n%(1<<16) == 0 && ctx.Err() != nil {
			return selection.Summary{}, fmt.Errorf("cut: %w", ctx.Err())
		}
		h, ok, err := m.next()
		if err != nil {
			return selection.Summary{}, err
		}
		if !ok {
			break
		}
		if int(h.source) >= len(r.Sources) || int(h.row) >= cf.Rows {
			return selection.Summary{}, workErrorf("shard %d: its ranking names row %d of source %d, which the set does not have", h.shard, h.row, h.source)
		}
		d := walker.Step(h.score, float64(h.tokens), p.cutBar(int(h.row)), int32(h.source))
		if d.Reason == selection.Duplicate {
			dups[h.shard] = append(dups[h.shard], uint64(h.row-uint32(heads[h.shard].FirstRow))<<32|uint64(p.keeperOf(int(h.row))))
		}
		st := &r.Sources[h.source]
		st.Rows++
		st.Tokens += int64(h.tokens)
		if d.Kept {
			r.KeptTokens += int64(h.tokens)
			st.KeptRows++
			st.KeptTokens += int64(h.tokens)
		} else {
			r.Dropped[d.Reason.String()]++
		}
		binary.LittleEndian.PutUint32(rec[0:], h.row-uint32(heads[h.shard].FirstRow))
		binary.LittleEndian.PutUint32(rec[4:], d.Rank)
		rec[8] = byte(d.Reason)
		binary.LittleEndian.PutUint64(rec[9:], math.Float64bits(d.LedgerAfter))
		outs[h.shard].w.Write(rec[:])
	}
	for i, o := range outs {
		sum, err := o.finish()
		if err != nil {
			return selection.Summary{}, fmt.Errorf("write %s: %w", filepath.Join(work, cutName, decisionsName(i)), err)
		}
		cf.Files[decisionsName(i)] = sum
	}
	if dups != nil {
		if err := p.writeDupOf(tmp, filepath.Join(work, cutName), heads, dups, cf.Files); err != nil {
			return selection.Summary{}, err
		}
	}
	return walker.Summary(), nil
}

// matched counts the rows scoring above 0 that are not barred and finds the lowest of their
// scores: from the shards' summaries, or, when duplicates are barred, which a shard cannot know,
// by a pass over the merged rankings.
func (p *picked) matched(ctx context.Context, work string, heads []*shardFile) (n int, lo float64, err error) {
	lo = math.Inf(1)
	if p.clusters == nil {
		for _, sf := range heads {
			n += sf.Matched
			if sf.Matched > 0 {
				lo = min(lo, sf.Lowest)
			}
		}
		return n, lo, nil
	}
	defer p.restartBar()
	m, err := openMerge(work, heads)
	if err != nil {
		return 0, 0, err
	}
	defer m.Close()
	for i := 0; ; i++ {
		if i%(1<<16) == 0 && ctx.Err() != nil {
			return 0, 0, fmt.Errorf("cut: %w", ctx.Err())
		}
		h, ok, err := m.next()
		if err != nil || !ok || !(h.score > 0) {
			return n, lo, err
		}
		if p.cutBar(int(h.row)) == selection.Kept {
			n, lo = n+1, h.score
		}
	}
}

// cutMinScore resolves a floor given relative to the scores, as MinScore.resolve does over every
// row, from the count n of rows scoring above 0 that are not barred (bar) and the lowest of their
// scores lo, and one more pass over the merged rankings: a lexical pick's floor is taken over
// those rows, which lead the ranking.
func cutMinScore(work string, heads []*shardFile, ms MinScore, n int, lo float64, bar func(row int) selection.Reason) (float64, error) {
	best := math.Inf(-1)
	if n == 0 {
		return math.Inf(1), nil
	}
	m, err := openMerge(work, heads)
	if err != nil {
		return 0, err
	}
	defer m.Close()
	at, minD := 0.0, math.Inf(1)
	want := -1 // the percentile's place from the top
	if ms.Kind == "percentile" {
		want = n - 1 - int(math.Floor(ms.Value/100*float64(n-1)))
	}
	for i := 0; i < n; i++ {
		h, ok, err := m.next()
		if err != nil {
			return 0, err
		}
		if !ok || !(h.score > 0) {
			return 0, workErrorf("the shards' rankings hold fewer rows scoring above 0 than their summaries say")
		}
		if bar(int(h.row)) != selection.Kept {
			i--
			continue
		}
		if i == 0 {
			best = h.score
		}
		switch ms.Kind {
		case "share":
			return ms.Value * best, nil // the best is above 0 here
		case "percentile":
			if i == want {
				return h.score, nil
			}
		case "knee":
			if n < 3 || best == lo {
				return lo, nil
			}
			if d := float64(i)/float64(n-1) + (h.score-lo)/(best-lo); d < minD {
				minD, at = d, h.score
			}
		}
	}
	return at, nil
}

// hashedFile is a file written through a buffer and a SHA-256.
type hashedFile struct {
	f *os.File
	w *bufio.Writer
	h hash.Hash
}

func createHashed(path string, buf int) (*hashedFile, error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, err
	}
	hf := &hashedFile{f: f, h: sha256.New()}
	hf.w = bufio.NewWriterSize(io.MultiWriter(f, hf.h), buf)
	return hf, nil
}

// finish flushes, syncs and closes the file, and returns its SHA-256 in hex.
func (hf *hashedFile) finish() (string, error) {
	err := hf.w.Flush()
	if err == nil {
		err = hf.f.Sync()
	}
	if e := hf.f.Close(); err == nil {
		err = e
	}
	hf.f = nil
	return hex.EncodeToString(hf.h.Sum(nil)), err
}

package run

import (
	"bufio"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"sluice/index"
	"sluice/index/decontam"
	selection "sluice/select"
)

// contamFile is a shard's contaminated rows, one JSON line a row in input order: the row among the
// shard's, and the evaluation file (as numbered in --exclude), line and n-gram it shares.
const contamFile = "contaminated.jsonl"

// contamLine is a line of contamFile.
type contamLine struct {
	Row   int      `json:"row"`
	File  int      `json:"file"`
	Line  int64    `json:"line"`
	Words []string `json:"words"`
}

// checkEval checks the shard's rows against the evaluation files as Pick's guard does (evalSet,
// eachRowHashed), keeping each contaminated row's hit in p.guards.
func (p *picked) checkEval(ctx context.Context) error {
	g := p.opt.Guards
	if len(g.Exclude) == 0 {
		return nil
	}
	ex, hits, err := p.indexExcluded()
	if err != nil {
		return err
	}
	if ex != nil {
		// Every segment was checked against these files when it was built, as the pick over the set
		// would find: the shard takes its segment's list and reads no text.
		p.guards = &guarded{contam: hits, evalFiles: g.Exclude, evalWork: ex.Words, longest: ex.Longest, evalBuilt: ex}
		return nil
	}
	set, err := evalSet(g.Exclude, g.ExcludeN)
	if err != nil {
		return err
	}
	gd := &guarded{contam: map[int]decontam.Hit{}, evalFiles: g.Exclude}
	_, err = eachRowHashed(ctx, p.ix, hashPlan{set: set}, func(h *rowHashes) error {
		if h.contaminated {
			gd.contam[h.row] = h.hit
		}
		gd.evalWork += h.words
		gd.longest = max(gd.longest, int(h.words))
		return nil
	})
	if err != nil {
		return fmt.Errorf("look for evaluation rows: %w", err)
	}
	p.guards = gd
	return nil
}

// writeContam writes contamFile: the contaminated rows in input order.
func (p *picked) writeContam(w *bufio.Writer) error {
	enc := json.NewEncoder(w)
	for r := range p.ix.NumRows() {
		if hit, ok := p.guards.contam[r]; ok {
			if err := enc.Encode(contamLine{Row: r, File: hit.File, Line: hit.Line, Words: hit.Words}); err != nil {
				return err
			}
		}
	}
	return nil
}

// readContam reads shard sf's contaminated rows, checked against its summary, and calls fn with
// each (row among the shard's) in input order.
func readContam(work string, sf *shardFile, files int, fn func(row int, hit decontam.Hit)) error {
	path := filepath.Join(shardFolder(work, sf.Shard), contamFile)
	f, err := os.Open(path)
	if errors.Is(err, os.ErrNotExist) {
		return workErrorf("shard %d of %d: %s is missing", sf.Shard, sf.Of, path)
	}
	if err != nil {
		return fmt.Errorf("shard %d of %d: %w", sf.Shard, sf.Of, err)
	}
	defer f.Close()
	h := sha256.New()
	tee := io.TeeReader(bufio.NewReader(f), h)
	dec := json.NewDecoder(tee)
	n, last := 0, -1
	for dec.More() {
		var l contamLine
		if err := dec.Decode(&l); err != nil {
			return workErrorf("shard %d: %s is damaged: %v", sf.Shard, path, err)
		}
		if l.Row <= last || l.Row >= sf.Rows || l.File < 0 || l.File >= files || len(l.Words) == 0 {
			return workErrorf("shard %d: %s is damaged: row %d (evaluation file %d) is out of place", sf.Shard, path, l.Row, l.File)
		}
		fn(l.Row, decontam.Hit{File: l.File, Line: l.Line, Words: l.Words})
		last = l.Row
		n++
	}
	if _, err := io.Copy(io.Discard, tee); err != nil {
		return fmt.Errorf("shard %d of %d: %w", sf.Shard, sf.Of, err)
	}
	if got := hex.EncodeToString(h.Sum(nil)); got != sf.Files[contamFile] {
		return workErrorf("shard %d: %s is damaged: SHA-256 %.12s, its summary says %.12s", sf.Shard, path, got, sf.Files[contamFile])
	}
	if n != sf.Contaminated {
		return workErrorf("shard %d: %s holds %d rows, its summary says %d", sf.Shard, path, n, sf.Contaminated)
	}
	return nil
}

// cutGuards gathers the set's clusters of duplicates from the dups steps' parts (cutDups) and the
// shards' contaminated rows, by row among the set's (without their hits, which the write steps
// read), words checked and longest row, and charges them as Pick's guard does.
func (p *picked) cutGuards(work string, heads []*shardFile) error {
	ex := p.opt.Guards.Exclude
	if !p.opt.Guards.active() {
		return nil
	}
	gd := &guarded{contam: map[int]decontam.Hit{}}
	if p.dropsDups() {
		if err := p.cutDups(work, heads, gd); err != nil {
			return err
		}
	}
	if len(ex) == 0 {
		p.guards = gd
		return nil
	}
	gd.evalFiles = ex
	built := 0
	for _, sf := range heads {
		gd.evalWork += sf.EvalWords
		gd.longest = max(gd.longest, sf.Longest)
		if sf.EvalBuilt {
			built++
		}
		err := readContam(work, sf, len(ex), func(r int, _ decontam.Hit) { gd.contam[sf.FirstRow+r] = decontam.Hit{} })
		if err != nil {
			return err
		}
	}
	switch built {
	case len(heads):
		// The set's own list, joined: the pick over it charges nothing and notes the build's words.
		gd.evalBuilt = &index.Excluded{N: orDefaultInt(p.opt.Guards.ExcludeN, DefaultExcludeN), Rows: int64(len(gd.contam)), Words: gd.evalWork, Longest: gd.longest}
	case 0:
	default:
		return workErrorf("%d of %d shards took their segments' lists of evaluation rows and the others checked their rows: score them all again with this sluice", built, len(heads))
	}
	p.guards = gd
	p.chargeGuards()
	return nil
}

// guardBar is why a step bars row (among the set's in the cut, the shard's in a score step) before the walk: contaminated, or not at all.
func (p *picked) guardBar(row int) selection.Reason {
	if p.guards != nil {
		if _, ok := p.guards.contam[row]; ok {
			return selection.Contaminated
		}
	}
	return selection.Kept
}

// loadContam reads the shard's contaminated rows with their hits, for its lines of scores.jsonl.
func (p *picked) loadContam(work string, sf *shardFile) error {
	ex := p.opt.Guards.Exclude
	if len(ex) == 0 {
		return nil
	}
	gd := &guarded{contam: map[int]decontam.Hit{}, evalFiles: ex}
	p.guards = gd
	return readContam(work, sf, len(ex), func(r int, hit decontam.Hit) { gd.contam[r] = hit })
}

package run

import (
	"bufio"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"

	"github.com/klauspost/compress/gzip"
	"github.com/klauspost/compress/zstd"

	"sluice/index"
	"sluice/index/atomicdir"
	selection "sluice/select"
)

// partFile is part.json: a shard's share of the run folder's files, and the cut it was made from.
type partFile struct {
	Format   string            `json:"format"`
	Identity string            `json:"identity"`
	Options  string            `json:"options"`
	Shard    int               `json:"shard"`
	Of       int               `json:"of"`
	Cut      string            `json:"cut"`   // SHA-256 of the cut.json it follows
	Files    map[string]string `json:"files"` // SHA-256 of its scores and kept rows
}

// partKept is a part's kept rows, uncompressed: JoinShards compresses them all as one stream.
const partKept = "kept.jsonl"

func partKind() atomicdir.Kind {
	return shardKind("shard's part", partMark, func(n string) bool { return n == ScoresFile || n == partKept })
}

// readCut reads cut.json and checks it was made for this pick over this set; it returns its bytes'
// SHA-256 too.
func readCut(work, key, ident string) (*cutFile, string, error) {
	cf := &cutFile{}
	b, err := readJSON(filepath.Join(work, cutName, cutMark), "the cut (run the cut step)", cf)
	if err != nil {
		return nil, "", err
	}
	switch {
	case cf.Format != shardFormat:
		return nil, "", workErrorf("%s is not a cut's summary", filepath.Join(work, cutName, cutMark))
	case cf.Identity != ident:
		return nil, "", workErrorf("the cut was made over another index set (identity %.12s; the set is now %.12s)", cf.Identity, ident)
	case cf.Options != key:
		return nil, "", workErrorf("the cut was made with other flags, another target or other evaluation files (--exclude, by content): give every step the same pick flags and files")
	}
	sum := sha256.Sum256(b)
	return cf, hex.EncodeToString(sum[:]), nil
}

// WriteShard is a sharded pick's step after the cut: segment shard's lines of scores.jsonl and its
// kept rows, from its scores and the cut's decisions, written to the work folder's part-NNNN.
func WriteShard(ctx context.Context, opt Options, work string, shard int) (*ShardReport, error) {
	key, ident, err := startStep(&opt, false)
	if err != nil {
		return nil, err
	}
	cf, cutSum, err := readCut(work, key, ident)
	if err != nil {
		return nil, err
	}
	if shard < 0 || shard >= cf.Of {
		return nil, shardErrorf("--shard %d: the set has %d segments, numbered 0 to %d", shard, cf.Of, cf.Of-1)
	}
	sf := &shardFile{}
	if _, err := readJSON(filepath.Join(shardFolder(work, shard), shardMark), fmt.Sprintf("shard %d of %d", shard, cf.Of), sf); err != nil {
		return nil, err
	}
	if sf.Identity != ident || sf.Options != key || sf.Shard != shard {
		return nil, workErrorf("shard %d of %d: its scores are not those the cut read: run the cut again", shard, cf.Of)
	}
	ix, err := index.OpenShard(opt.Index, shard)
	if err != nil {
		return nil, err
	}
	defer ix.Close()
	p := &picked{opt: &opt, ix: ix, target: opt.Target}
	if err := p.readTargets(opt.Target); err != nil {
		return nil, err
	}
	if err := p.loadShard(work, sf, cf); err != nil {
		return nil, err
	}
	if err := p.loadContam(work, sf); err != nil {
		return nil, err
	}
	if p.dropsDups() {
		if err := p.loadDupOf(work, sf, cf); err != nil {
			return nil, err
		}
	}
	dir := partFolder(work, shard)
	pf := &partFile{Format: shardFormat, Identity: ident, Options: key, Shard: shard, Of: cf.Of, Cut: cutSum, Files: map[string]string{}}
	plain := opt
	plain.Compress = "none" // the join compresses the parts as one stream
	p.opt = &plain
	err = publishWork(dir, partKind(), []string{opt.Index, opt.Target}, func(tmp string) error {
		if err := writeWork(tmp, dir, []workFill{{ScoresFile, p.writeScores}, {partKept, p.copyKept}}, pf.Files, partMark, pf); err != nil {
			return err
		}
		return ix.Err() // a part of the index that failed its check as it was read answered zeros
	})
	if err != nil {
		return nil, err
	}
	return &ShardReport{Step: "write", Shard: shard, Of: cf.Of, Rows: sf.Rows, Kept: len(p.out.Kept), Wrote: dir}, nil
}

// loadShard reads the shard's scores and best target rows, and the cut's decisions for its rows.
func (p *picked) loadShard(work string, sf *shardFile, cf *cutFile) error {
	n := p.ix.NumRows()
	if n != sf.Rows {
		return workErrorf("shard %d of %d has %d rows, its summary says %d", sf.Shard, sf.Of, n, sf.Rows)
	}
	rows, err := openRecords(filepath.Join(shardFolder(work, sf.Shard), shardRows), "sluiceRW", sf.Shard, sf.Of, n, rowRecSize, sf.Files[shardRows], 1<<20)
	if err != nil {
		return err
	}
	defer rows.Close()
	p.scores, p.best = make([]float64, n), make([]int32, n)
	for r := 0; ; r++ {
		ok, err := rows.next()
		if err != nil {
			return err
		}
		if !ok {
			break
		}
		p.scores[r] = math.Float64frombits(binary.LittleEndian.Uint64(rows.rec))
		p.best[r] = int32(binary.LittleEndian.Uint32(rows.rec[8:]))
		if p.best[r] < -1 || int(p.best[r]) >= len(p.targets) {
			return workErrorf("shard %d of %d: %s names target row %d of %d", sf.Shard, sf.Of, rows.path, p.best[r], len(p.targets))
		}
	}
	if p.opt.Params.SkipBest {
		p.best = nil
	}
	name := decisionsName(sf.Shard)
	decs, err := openRecords(filepath.Join(work, cutName, name), "sluiceDC", sf.Shard, sf.Of, n, decRecSize, cf.Files[name], 1<<20)
	if err != nil {
		return err
	}
	defer decs.Close()
	p.dec = make([]selection.Decision, n)
	for {
		ok, err := decs.next()
		if err != nil {
			return err
		}
		if !ok {
			break
		}
		b := decs.rec
		r, why := binary.LittleEndian.Uint32(b), selection.Reason(b[8])
		if rank := binary.LittleEndian.Uint32(b[4:]); rank == 0 || int(rank) > cf.Rows || (why != selection.Kept && !slices.Contains(selection.Reasons(), why)) {
			return workErrorf("shard %d of %d: %s is damaged: row %d has rank %d and reason %d", sf.Shard, sf.Of, decs.path, r, rank, b[8])
		}
		if int(r) >= n || p.dec[r].Rank != 0 {
			return workErrorf("shard %d of %d: %s decides row %d twice or past the shard's rows", sf.Shard, sf.Of, decs.path, r)
		}
		p.dec[r] = selection.Decision{Rank: binary.LittleEndian.Uint32(b[4:]), Reason: selection.Reason(b[8]),
			Kept: b[8] == byte(selection.Kept), LedgerAfter: math.Float64frombits(binary.LittleEndian.Uint64(b[9:]))}
	}
	for r, d := range p.dec {
		if d.Kept {
			p.out.Kept = append(p.out.Kept, r)
		}
	}
	return nil
}

// JoinShards is a sharded pick's last step: the parts joined, in segment order, into the run folder
// opt.Out, with the cut's ledger, written and published as a pick writes its run folder. Its
// manifest differs from the manifest of `pick` over the set in the command line alone.
func JoinShards(ctx context.Context, opt Options, work string) (*ShardReport, error) {
	key, ident, err := startStep(&opt, true)
	if err != nil {
		return nil, err
	}
	cf, cutSum, err := readCut(work, key, ident)
	if err != nil {
		return nil, err
	}
	parts := make([]*partFile, cf.Of)
	for i := range parts {
		pf := &partFile{}
		if _, err := readJSON(filepath.Join(partFolder(work, i), partMark), fmt.Sprintf("shard %d of %d (run its write step)", i, cf.Of), pf); err != nil {
			return nil, err
		}
		if pf.Format != shardFormat || pf.Shard != i || pf.Cut != cutSum {
			return nil, workErrorf("shard %d of %d: %s was not written from this cut: run its write step again", i, cf.Of, partFolder(work, i))
		}
		parts[i] = pf
	}
	sf := &shardFile{}
	if _, err := readJSON(filepath.Join(shardFolder(work, 0), shardMark), "shard 0", sf); err != nil {
		return nil, err
	}
	tmp, err := atomicdir.Temp(opt.Out)
	if err != nil {
		return nil, err
	}
	defer atomicdir.Discard(tmp)
	concat := func(part string) func(io.Writer) error {
		return func(w io.Writer) error {
			for i := range parts {
				if err := copyChecked(w, filepath.Join(partFolder(work, i), part), parts[i].Files[part]); err != nil {
					return err
				}
			}
			return nil
		}
	}
	outs := []struct {
		name string
		fill func(w *bufio.Writer) error
	}{
		{KeptName(opt.Compress), func(w *bufio.Writer) error {
			return compressed(w, opt.Compress, concat(partKept))
		}},
		{ScoresFile, func(w *bufio.Writer) error { return concat(ScoresFile)(w) }},
		{LedgerFile, func(w *bufio.Writer) error {
			return copyChecked(w, filepath.Join(work, cutName, LedgerFile), cf.Files[LedgerFile])
		}},
		{RejectedFile, func(w *bufio.Writer) error {
			return copyChecked(w, filepath.Join(shardFolder(work, 0), RejectedFile), sf.Files[RejectedFile])
		}},
	}
	hashes := map[string]string{}
	for _, o := range outs {
		if hashes[o.name], err = writeHashed(filepath.Join(tmp, o.name), filepath.Join(opt.Out, o.name), o.fill); err != nil {
			return nil, err
		}
	}
	p := &picked{opt: &opt, target: opt.Target}
	p.out.Settings = cf.Settings
	if err := writeManifest(tmp, opt.Out, p.manifest(), hashes); err != nil {
		return nil, err
	}
	if err := atomicdir.Publish(tmp, opt.Out); err != nil {
		return nil, err
	}
	return &ShardReport{Step: "join", Shard: -1, Of: cf.Of, Rows: cf.Rows, Kept: cf.Kept, KeptTokens: cf.KeptTokens, Stop: cf.Stop, Wrote: opt.Out}, nil
}

// copyChecked copies the file path to w and refuses it unless its SHA-256 is sum.
func copyChecked(w io.Writer, path, sum string) error {
	f, err := os.Open(path)
	if err != nil {
		return workErrorf("%s: %v", path, err)
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(io.MultiWriter(w, h), f); err != nil {
		return fmt.Errorf("read %s: %w", path, err)
	}
	if got := hex.EncodeToString(h.Sum(nil)); got != sum {
		return workErrorf("%s is damaged: SHA-256 %.12s, its summary says %.12s", path, got, sum)
	}
	return nil
}

// compressed lets write write to w through the compression a run's kept file is written with.
func compressed(w io.Writer, compress string, write func(io.Writer) error) error {
	switch compress {
	case "gzip":
		zw := gzip.NewWriter(w)
		if err := write(zw); err != nil {
			return err
		}
		return zw.Close()
	case "zstd":
		zw, err := zstd.NewWriter(w)
		if err != nil {
			return err
		}
		if err := write(zw); err != nil {
			zw.Close()
			return err
		}
		return zw.Close()
	}
	return write(w)
}

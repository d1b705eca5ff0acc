package run

import (
	"bufio"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"hash"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"sluice/budget"
	"sluice/index"
	"sluice/index/atomicdir"
	"sluice/score"
	selection "sluice/select"
)

// A sharded pick is a pick over an index set whose segments are scored on machines of their own,
// in five steps sharing a work folder, each a process of its own:
//
//   - ScoreShard, once per segment: the segment's rows scored with the set's statistics
//     (index.OpenShard), written as a ranking sorted as Pick sorts (score descending, then row), their
//     scores and best target rows in input order, and a summary (shard-NNNN); unless duplicates are
//     kept, the segment's keys shared out by part (sharddups.go);
//   - DupsShard, once per part (as many as segments): the set's duplicates among the part's keys;
//   - CutShards, once: the shards' rankings merged as a stream, a heap of one head per shard, and
//     walked by a selection.Walker, which keeps what Pick over all rows keeps; it writes each
//     shard's decisions and the ledger (cut);
//   - WriteShard, once per segment: its lines of scores.jsonl and its kept rows (part-NNNN);
//   - JoinShards, once: the parts joined in segment order into an ordinary run folder.
//
// With the flags a sharded pick takes (CheckShardable), the run folder's scores.jsonl, kept file,
// ledger.json and rejected.jsonl are byte for byte those `pick` over the set writes, and its
// manifest differs in the command line alone.

// Errors of a sharded pick, matched with errors.Is: ErrShard by every refusal of its flags (a flag it
// cannot honour, a step without the --shard it needs), ErrShardWork by every refusal of its work
// folder's files (a shard's or the cut's summary or file missing, damaged, made by another pick,
// over another version of the set or with other statistics).
var (
	ErrShard     = errors.New("sharded pick refused")
	ErrShardWork = errors.New("sharded pick's work refused")
)

type shardError struct {
	msg  string
	kind error
}

func (e shardError) Error() string     { return e.msg }
func (e shardError) Is(err error) bool { return err == e.kind }

func shardErrorf(format string, a ...any) error {
	return shardError{fmt.Sprintf(format, a...), ErrShard}
}

func workErrorf(format string, a ...any) error {
	return shardError{fmt.Sprintf(format, a...), ErrShardWork}
}

// CheckShardable refuses, before any work and naming the flag, what a sharded pick cannot do to
// the bit as a pick over the whole set does: anything needing every row at once or read twice
// (model-based methods and the cascade; several targets; a target from a pipe). --exclude is per
// row and is honoured: each score step checks its own rows against the evaluation files. Duplicates
// are found across the set from what its segments stored (sharddups.go); the score step refuses a
// set whose segments did not store them.
func CheckShardable(opt Options) error {
	switch m := opt.method(); {
	case !lexical(m):
		return shardErrorf("--method %s: a sharded pick scores by bm25 or tfidf, from each segment's postings with the set's statistics; pick over the whole set for %s", m, m)
	case len(opt.ExtraTargets) > 0:
		return shardErrorf("--target given %d times: a sharded pick takes one target set", 1+len(opt.ExtraTargets))
	case opt.Prefilter.active():
		return shardErrorf("--prefilter goes before a model-based method, which a sharded pick does not run")
	case opt.Target == "-":
		return shardErrorf("--target -: every step of a sharded pick reads the target again; give a file")
	}
	if fi, err := os.Stat(opt.Target); err != nil {
		return fmt.Errorf("read target %s: %w", opt.Target, err)
	} else if !fi.Mode().IsRegular() {
		return shardErrorf("--target %s is not a regular file: every step of a sharded pick reads it again", opt.Target)
	}
	return nil
}

// The names in a sharded pick's work folder.
const (
	shardFormat  = "sluice shard 1"
	shardMark    = "shard.json"
	rankingFile  = "ranking"
	shardRows    = "rows"
	cutName      = "cut"
	cutMark      = "cut.json"
	partMark     = "part.json"
	rankRecSize  = 24 // score, row among the set's, source among the set's, tokens
	rowRecSize   = 12 // score, best target row
	decRecSize   = 17 // row in the shard, rank, reason, ledger after
	fileHeadSize = 32 // magic, shard, of, rows, first row
)

func shardFolder(work string, i int) string { return filepath.Join(work, fmt.Sprintf("shard-%04d", i)) }
func partFolder(work string, i int) string  { return filepath.Join(work, fmt.Sprintf("part-%04d", i)) }
func decisionsName(i int) string            { return fmt.Sprintf("decisions-%04d", i) }

// shardKind is a folder of a sharded pick's work: its mark file, written by sluice with format
// shardFormat, and the names it may hold.
func shardKind(name, mark string, holds func(string) bool) atomicdir.Kind {
	return atomicdir.Kind{Name: name, Mark: mark,
		IsOur: func(b []byte) bool {
			var h struct{ Format string }
			return json.Unmarshal(b, &h) == nil && h.Format == shardFormat
		},
		Holds: func(n string) bool { return n == mark || holds(n) }}
}

func scoredKind() atomicdir.Kind {
	return shardKind("shard's scores", shardMark, func(n string) bool {
		return n == rankingFile || n == shardRows || n == RejectedFile || n == contamFile || isPartFile(n)
	})
}

// shardFile is shard.json: what the cut and the later steps check a shard's files against.
type shardFile struct {
	Format   string `json:"format"`
	Sluice   string `json:"sluice"`
	Identity string `json:"identity"` // the set's (index.Identity)
	Options  string `json:"options"`  // the pick's options (shardOptions)
	Shard    int    `json:"shard"`
	Of       int    `json:"of"`
	FirstRow int    `json:"first_row"`
	Rows     int    `json:"rows"`
	// Stats is the SHA-256 of the statistics the scores used: the set's rows, average length and
	// each target term's document frequency.
	Stats string     `json:"stats"`
	Meta  index.Meta `json:"meta"` // the set's
	// Lines are the ledger's lines before scoring; Work is the scoring's, over this shard's rows.
	Lines           []budget.Line `json:"lines"`
	Work            score.Work    `json:"work"`
	Spec            string        `json:"spec"`      // the target's text spec, as read
	TargetID        string        `json:"target_id"` // the target's id field, as read
	Targets         int           `json:"targets"`
	TargetsRejected int           `json:"targets_rejected"`
	Matched         int           `json:"matched"` // rows scoring above 0
	Lowest          float64       `json:"lowest"`  // the lowest score above 0; 0 when none
	// With --exclude: the words of the shard's rows checked against the evaluation files, the most
	// words one row had, and the rows found contaminated (listed in contamFile). Matched and Lowest leave those rows out, as
	// a relative --min-score does.
	EvalWords    int64 `json:"eval_words,omitempty"`
	Longest      int   `json:"longest,omitempty"`
	Contaminated int   `json:"contaminated,omitempty"`
	// EvalBuilt says the rows were checked when the segment was built (index.Contamination).
	EvalBuilt bool `json:"eval_built,omitempty"`
	// Dups is, when the pick drops duplicates, what the segment gave the search for the set's.
	Dups  *shardDups        `json:"dups,omitempty"`
	Files map[string]string `json:"files"` // SHA-256 of each other file
}

// startStep checks what every step checks before it reads anything of the work folder: that opt
// can be sharded and, for a step that writes the run folder or may refuse to (out), that opt.Out
// may be written. It returns opt's fingerprint (shardOptions) and the set's identity.
func startStep(opt *Options, out bool) (key, ident string, err error) {
	if err := CheckShardable(*opt); err != nil {
		return "", "", err
	}
	if out {
		if err := CheckOut(*opt); err != nil {
			return "", "", err
		}
	}
	if key, err = shardOptions(opt); err != nil {
		return "", "", err
	}
	if ident, err = index.Identity(opt.Index); err != nil {
		return "", "", err
	}
	return key, ident, nil
}

// shardOptions is a fingerprint of everything in opt that decides a row's score or fate, so that
// every step of a sharded pick is sure to run the same pick: the target's and the evaluation
// files' content, not their paths, and nothing of where the run is written or how much memory a
// step may take.
func shardOptions(opt *Options) (string, error) {
	sum, err := sha256File(opt.Target)
	if err != nil {
		return "", fmt.Errorf("read target %s: %w", opt.Target, err)
	}
	var evals []string
	for _, f := range opt.Guards.Exclude {
		s, err := sha256File(f)
		if err != nil {
			return "", fmt.Errorf("read evaluation file %s: %w", f, err)
		}
		evals = append(evals, s)
	}
	k := *opt
	k.Index, k.Target, k.Out, k.Command, k.Version, k.Stdin, k.MaxMem, k.scoreBatch = "", "", "", nil, "", nil, 0, 0
	k.Params.Workers, k.Params.CacheBytes, k.Params.Progress = 0, 0, nil
	k.Guards.Exclude = nil
	h := sha256.New()
	fmt.Fprintf(h, "%s\n%+v", sum, k)
	if len(evals) > 0 {
		fmt.Fprintf(h, "\nexclude %s", strings.Join(evals, " "))
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

// statsKey is the SHA-256 of the statistics a shard's scores used.
func (p *picked) statsKey() string {
	h := sha256.New()
	fmt.Fprintf(h, "%d %x\n", p.ix.WholeRows(), math.Float64bits(p.ix.AvgLen()))
	var terms []string
	for _, t := range p.targets {
		terms = append(terms, t.Terms...)
	}
	slices.Sort(terms)
	for _, t := range slices.Compact(terms) {
		fmt.Fprintf(h, "%q %d\n", t, p.ix.DF(t))
	}
	return hex.EncodeToString(h.Sum(nil))
}

// ShardReport is what a step of a sharded pick did, for a line of its summary.
type ShardReport struct {
	Step       string // score, dups, cut, write or join
	Shard, Of  int
	Rows       int    // rows of the shard (score, write) or of the set (cut)
	Kept       int    // rows kept (cut, write)
	KeptTokens int64  // (cut)
	Stop       string // why the walk stopped (cut)
	Wrote      string // the folder written
}

// ScoreShard is a sharded pick's first step: segment shard of the index set opt.Index scored with
// the set's statistics, its ranking, rows and summary written to the work folder's shard-NNNN.
func ScoreShard(ctx context.Context, opt Options, work string, shard int) (*ShardReport, error) {
	key, ident, err := startStep(&opt, true)
	if err != nil {
		return nil, err
	}
	ix, err := index.OpenShard(opt.Index, shard)
	if err != nil {
		return nil, err
	}
	defer ix.Close()
	p := &picked{opt: &opt, ix: ix, target: opt.Target}
	var dups *index.Dups
	if p.dropsDups() {
		if dups, err = p.checkShardDups(); err != nil {
			return nil, err
		}
	}
	if err := p.readTargets(opt.Target); err != nil {
		return nil, err
	}
	if err := p.checkMemory(); err != nil {
		return nil, err
	}
	if err := p.score(ctx); err != nil {
		return nil, err
	}
	if err := p.checkEval(ctx); err != nil {
		return nil, err
	}
	_, of := ix.Shard()
	sf := &shardFile{Format: shardFormat, Sluice: opt.Version, Identity: ident, Options: key, Shard: shard, Of: of,
		FirstRow: ix.FirstRow(), Rows: ix.NumRows(), Stats: p.statsKey(), Meta: ix.Meta(),
		Lines: p.led.Lines[:len(p.led.Lines)-1], Work: p.work, Spec: p.spec, TargetID: p.tid, Targets: len(p.targets), TargetsRejected: len(p.trej),
		Files: map[string]string{}}
	fills := []workFill{{rankingFile, p.writeRanking}, {shardRows, p.writeShardRows}, {RejectedFile, p.writeRejected}}
	if p.guards != nil {
		sf.EvalWords, sf.Longest, sf.Contaminated = p.guards.evalWork, p.guards.longest, len(p.guards.contam)
		sf.EvalBuilt = p.guards.evalBuilt != nil
		fills = append(fills, workFill{contamFile, p.writeContam})
	}
	for r, s := range p.scores {
		if s > 0 && p.guardBar(r) == selection.Kept {
			sf.Matched++
			if sf.Lowest == 0 || s < sf.Lowest {
				sf.Lowest = s
			}
		}
	}
	dir := shardFolder(work, shard)
	err = publishWork(dir, scoredKind(), []string{opt.Index, opt.Target}, func(tmp string) error {
		if p.dropsDups() {
			var err error
			if sf.Dups, err = p.writeDupKeys(tmp, dir, dups, sf.Files); err != nil {
				return err
			}
		}
		if err := writeWork(tmp, dir, fills, sf.Files, shardMark, sf); err != nil {
			return err
		}
		return ix.Err() // a part of the index that failed its check as it was read answered zeros
	})
	if err != nil {
		return nil, err
	}
	return &ShardReport{Step: "score", Shard: shard, Of: of, Rows: sf.Rows, Wrote: dir}, nil
}

// workFill is a file of a work folder and what writes it.
type workFill struct {
	name string
	fill func(*bufio.Writer) error
}

// writeWork writes fills into tmp, recording each file's SHA-256 in sums, then mark, holding v, last:
// the folder a step publishes at dir.
func writeWork(tmp, dir string, fills []workFill, sums map[string]string, mark string, v any) error {
	for _, f := range fills {
		sum, err := writeHashed(filepath.Join(tmp, f.name), filepath.Join(dir, f.name), f.fill)
		if err != nil {
			return err
		}
		sums[f.name] = sum
	}
	return writeJSON(filepath.Join(tmp, mark), filepath.Join(dir, mark), v)
}

// publishWork writes a folder of the work with fill, in a working folder published when complete.
func publishWork(dir string, k atomicdir.Kind, inputs []string, fill func(tmp string) error) error {
	if err := os.MkdirAll(filepath.Dir(dir), 0o777); err != nil {
		return fmt.Errorf("make the work folder: %w", err)
	}
	if err := atomicdir.CheckOut(dir, k, inputs); err != nil {
		return err
	}
	tmp, err := atomicdir.Temp(dir)
	if err != nil {
		return err
	}
	if err := fill(tmp); err != nil {
		atomicdir.Discard(tmp)
		return err
	}
	if err := atomicdir.Publish(tmp, dir); err != nil {
		atomicdir.Discard(tmp)
		return err
	}
	return nil
}

// writeJSON writes v as indented JSON to path, synced; errors name it as shown.
func writeJSON(path, shown string, v any) error {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return fmt.Errorf("write %s: %w", shown, err)
	}
	return writeFileBytes(path, shown, append(b, '\n'))
}

// readJSON reads path into v; a missing file is reported as what, with the step that makes it.
func readJSON(path, what string, v any) ([]byte, error) {
	b, err := os.ReadFile(path)
	if errors.Is(err, os.ErrNotExist) {
		return nil, workErrorf("%s: %s is missing", what, path)
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %w", what, err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		return nil, workErrorf("%s: %s is damaged: %v", what, path, err)
	}
	return b, nil
}

// fileHead starts every binary file of the work: what it is, the shard, the shards and its rows.
func fileHead(magic string, shard, of, rows, first int) []byte {
	b := make([]byte, fileHeadSize)
	copy(b, magic)
	binary.LittleEndian.PutUint32(b[8:], uint32(shard))
	binary.LittleEndian.PutUint32(b[12:], uint32(of))
	binary.LittleEndian.PutUint64(b[16:], uint64(rows))
	binary.LittleEndian.PutUint64(b[24:], uint64(first))
	return b
}

// writeRanking writes the shard's rows in the order Pick ranks them: per row its score, its number
// among the set's rows, its source among the set's and its tokens.
func (p *picked) writeRanking(w *bufio.Writer) error {
	shard, of := p.ix.Shard()
	first := p.ix.FirstRow()
	if _, err := w.Write(fileHead("sluiceRK", shard, of, len(p.scores), first)); err != nil {
		return err
	}
	var b [rankRecSize]byte
	for _, r := range selection.Order(p.scores) {
		binary.LittleEndian.PutUint64(b[0:], math.Float64bits(p.scores[r]))
		binary.LittleEndian.PutUint32(b[8:], uint32(first+r))
		binary.LittleEndian.PutUint32(b[12:], uint32(p.ix.RowLocation(r).Source))
		binary.LittleEndian.PutUint64(b[16:], uint64(p.tokens(r)))
		if _, err := w.Write(b[:]); err != nil {
			return err
		}
	}
	return nil
}

// writeShardRows writes each row's score and best target row (-1 for none), in input order.
func (p *picked) writeShardRows(w *bufio.Writer) error {
	shard, of := p.ix.Shard()
	if _, err := w.Write(fileHead("sluiceRW", shard, of, len(p.scores), p.ix.FirstRow())); err != nil {
		return err
	}
	var b [rowRecSize]byte
	for r, s := range p.scores {
		best := int32(-1)
		if p.best != nil {
			best = p.best[r]
		}
		binary.LittleEndian.PutUint64(b[0:], math.Float64bits(s))
		binary.LittleEndian.PutUint32(b[8:], uint32(best))
		if _, err := w.Write(b[:]); err != nil {
			return err
		}
	}
	return nil
}

// recordFile reads a binary file of the work a record at a time, checking its head and, at the end,
// its SHA-256 against what its summary says.
type recordFile struct {
	f     *os.File
	r     *bufio.Reader
	h     hash.Hash
	path  string
	want  string
	left  int
	rec   []byte
	shard int
}

// openRecords opens path, a file of rows records of size bytes with the head magic, shard and of.
func openRecords(path, magic string, shard, of, rows, size int, sum string, buf int) (*recordFile, error) {
	return openRecordsHead(path, magic, shard, of, rows, rows, size, sum, buf)
}

// openRecordsHead is openRecords for a file whose head holds head where others hold their rows (a
// part's number, for a file of records shared out by key).
func openRecordsHead(path, magic string, shard, of, want, rows, size int, sum string, buf int) (*recordFile, error) {
	f, err := os.Open(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, workErrorf("shard %d of %d: %s is missing", shard, of, path)
		}
		return nil, fmt.Errorf("shard %d of %d: %w", shard, of, err)
	}
	rf := &recordFile{f: f, r: bufio.NewReaderSize(f, buf), h: sha256.New(), path: path, want: sum, left: rows, rec: make([]byte, size), shard: shard}
	head := make([]byte, fileHeadSize)
	if _, err := io.ReadFull(rf.r, head); err != nil || string(head[:8]) != magic ||
		binary.LittleEndian.Uint32(head[8:]) != uint32(shard) || binary.LittleEndian.Uint32(head[12:]) != uint32(of) ||
		binary.LittleEndian.Uint64(head[16:]) != uint64(want) {
		f.Close()
		return nil, workErrorf("shard %d of %d: %s is damaged or another shard's: its head does not match its summary", shard, of, path)
	}
	rf.h.Write(head)
	return rf, nil
}

// next reads the next record into rf.rec, or reports false at the end, where a sum that differs
// from the summary's is an error.
func (rf *recordFile) next() (bool, error) {
	if rf.left == 0 {
		if n, _ := rf.r.Read(rf.rec[:1]); n > 0 {
			return false, workErrorf("shard %d: %s is damaged: it runs on past its rows", rf.shard, rf.path)
		}
		if got := hex.EncodeToString(rf.h.Sum(nil)); got != rf.want {
			return false, workErrorf("shard %d: %s is damaged: SHA-256 %.12s, its summary says %.12s", rf.shard, rf.path, got, rf.want)
		}
		return false, nil
	}
	if _, err := io.ReadFull(rf.r, rf.rec); err != nil {
		return false, workErrorf("shard %d: %s is damaged: it ends %d rows short (%v)", rf.shard, rf.path, rf.left, err)
	}
	rf.h.Write(rf.rec)
	rf.left--
	return true, nil
}

func (rf *recordFile) Close() error { return rf.f.Close() }

// ShardSteps are the steps of a sharded pick, in the order they run.
func ShardSteps() []string { return []string{"score", "dups", "cut", "write", "join"} }

// ShardStep runs the step of a sharded pick that args name, one of ShardSteps; shard is the
// segment the score and write steps take (the part of the keys, numbered as the segments, the dups
// step takes), and must be -1 for the others.
func ShardStep(ctx context.Context, args []string, opt Options, work string, shard int) (*ShardReport, error) {
	if len(args) != 1 {
		return nil, shardErrorf("give one step (score, dups, cut, write or join), not %q", strings.Join(args, " "))
	}
	step := args[0]
	perShard := step == "score" || step == "dups" || step == "write"
	switch {
	case !slices.Contains(ShardSteps(), step):
		return nil, shardErrorf("no step %q: give score, dups, cut, write or join", step)
	case perShard && shard < 0:
		return nil, shardErrorf("the %s step takes --shard, the segment of the set it works on (from 0)", step)
	case !perShard && shard >= 0:
		return nil, shardErrorf("the %s step takes every shard at once: drop --shard", step)
	}
	var rep *ShardReport
	var err error
	switch step {
	case "score":
		rep, err = ScoreShard(ctx, opt, work, shard)
	case "dups":
		rep, err = DupsShard(ctx, opt, work, shard)
	case "cut":
		rep, err = CutShards(ctx, opt, work)
	case "write":
		rep, err = WriteShard(ctx, opt, work, shard)
	default:
		rep, err = JoinShards(ctx, opt, work)
	}
	if errors.Is(err, index.ErrNoSegment) {
		// A --shard past the set's last segment is a wrong flag, not a failed step.
		return nil, shardErrorf("%v", err)
	}
	return rep, err
}

// String is the step's summary line.
func (r *ShardReport) String() string {
	switch r.Step {
	case "score":
		return fmt.Sprintf("shard %d of %d: scored %d rows; wrote %s", r.Shard, r.Of, r.Rows, r.Wrote)
	case "write":
		return fmt.Sprintf("shard %d of %d: %d kept rows and %d lines of scores; wrote %s", r.Shard, r.Of, r.Kept, r.Rows, r.Wrote)
	case "dups":
		if r.Wrote == "" {
			return fmt.Sprintf("duplicates, part %d of %d: nothing to do (duplicates kept)", r.Shard, r.Of)
		}
		return fmt.Sprintf("duplicates, part %d of %d: %d repeats and candidate pairs; wrote %s", r.Shard, r.Of, r.Rows, r.Wrote)
	}
	return fmt.Sprintf("%s: kept %d of %d rows (%d tokens) from %d shards; stopped: %s; wrote %s", r.Step, r.Kept, r.Rows, r.KeptTokens, r.Of, r.Stop, r.Wrote)
}

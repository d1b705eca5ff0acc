package run

import (
	"bufio"
	"cmp"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"sluice/budget"
	"sluice/index"
	"sluice/index/analysis"
	"sluice/index/atomicdir"
	"sluice/index/jsonl"
	"sluice/score"
	selection "sluice/select"
)

// Options is one pick with every choice made; the zero value of an optional field takes the
// index's setting.
type Options struct {
	Index  string // index folder
	Target string // JSONL file of target-task rows
	// ExtraTargets are further target sets, for a pick that serves several tasks at once: each set
	// is scored alone and the training budget is split between them by Weights (pickSets).
	ExtraTargets []string
	// Weights are the sets' parts of the training budget, Target's first, summing to 1 (see
	// ParseWeights); nil gives every set an equal part. Only with ExtraTargets.
	Weights    []float64
	TargetText string // text spec of the target rows; "" reads them as the index read the pool
	TargetID   string // id field of the target rows; "" takes the index's
	Analyzer   string // "" takes the index's; else the index must have been built with it
	OtherText  bool   // a TargetText unlike the index's spec is meant

	Method    string         // one of Methods(); "" takes Params.Method
	Params    score.Params   // the lexical methods' parameters
	Ngram     NgramOptions   // for MethodNgram
	Scores    ScoresOptions  // for MethodScores
	Vectors   VectorsOptions // for MethodVectors
	Guards    Guards         // duplicates, evaluation rows, source shares
	Prefilter Prefilter      // a cheap first stage before a model-based method; zero for none
	// MinScore, when not the zero value, sets Select.MinScore from the scores once they are known:
	// a share of the best score or a percentile.
	MinScore MinScore
	// MinScoreSet says Select.MinScore was given. Model-based scores can be below zero, so
	// without it they have no floor; lexical scores always keep theirs (0 by default).
	MinScoreSet bool

	Budget      float64 // FLOPs for selection and training together
	BudgetHow   string  // how the budget was given, for the ledger and manifest
	TrainParams float64 // parameters of the model to be trained
	Epochs      float64
	Select      selection.Options // Budget and Fixed are set by Pick

	// MaxMem, when above 0, is the most memory the pick may need by its estimate (memoryNeed); a
	// pick needing more fails with ErrMemory before scoring.
	MaxMem int64

	Out      string // run folder to write
	Compress string // none, gzip or zstd
	// KeptFormat is KeptRows ("" too): the kept rows byte for byte; or KeptText or KeptChat.
	KeptFormat string
	Command    []string  // the command line, for the manifest
	Version    string    // sluice's version, for the manifest
	Stdin      io.Reader // read for a Target of "-"; nil is os.Stdin

	scoreBatch int // rows of scores.jsonl formatted at a time; 0 for scoreBatch (tests set it)
}

// Result is what a pick did, for a summary; the run folder holds all of it and more.
type Result struct {
	Settings        Settings
	Meta            index.Meta // the index's, as the pick read it
	Rows            int        // indexed rows scored
	Targets         int        // target rows used
	TargetsRejected int        // target rows quarantined in the run's rejected.jsonl
	Kept            []int      // kept rows, ascending
	KeptTokens      int64
	Ledger          *budget.Ledger
	Summary         selection.Summary
	Sources         []SourceTally  // per pool file, in the index's order
	Dropped         map[string]int // rows not kept, by reason ("budget", "duplicate", ...)
	Notes           []string       // what the guards found, as the ledger notes it
	Index, Out      string         // the index read and the run folder written
	Files           []string       // the files written into the run folder, manifest last
	Sets            []SetRef       // with several target sets: each set's part, in the order given
}

// SourceTally is what a pick kept of one pool file.
type SourceTally struct {
	File               string
	Rows, KeptRows     int
	Tokens, KeptTokens int64
}

// Reconciliation is the line every pick summary and ledger carries, so no row vanishes unseen.
func (r *Result) Reconciliation() string {
	return reconciliation(r.Meta, r.Targets, r.TargetsRejected)
}

func reconciliation(m index.Meta, targets, targetsRejected int) string {
	return fmt.Sprintf("rows: read %d = indexed %d + quarantined %d; target rows: read %d = used %d + quarantined %d",
		m.RowsRead, m.Rows, m.RowsRejected, targets+targetsRejected, targets, targetsRejected)
}

// picked is a pick in progress: what writing the run folder needs.
type picked struct {
	opt       *Options
	ix        *index.Index
	spec      string
	tid       string
	targets   []index.Target
	trej      []index.Reject
	led       *budget.Ledger     // the selection charged so far
	scores    []float64          // per row; NaN where barred with no score
	best      []int32            // per row, the best-matching target row or -1; nil if none
	barred    []selection.Reason // per row, why a row may not be kept; nil if none is barred
	survivors int                // rows that passed the prefilter
	dec       []selection.Decision
	out       Result
	guards    *guarded          // what the guards found; nil when none ran
	dupOf     func(row int) int // a dropped duplicate's row -> the row kept instead
	dropped   int               // rows whose cluster keeps another row
	clusters  *shardClusters    // a sharded pick's cut: the set's clusters and the rows kept of them
	dupIDs    map[int]string    // a sharded pick's write step: a duplicate's row -> the id of the row kept
	tmp       string            // the run's working folder, once made
	target    string            // where the target is read from: opt.Target, or its copy in tmp
	sets      []*targetSet      // with several target sets, each; nil for one
	rowSet    []uint8           // with several target sets, the set each row's line of scores.jsonl shows
	work      score.Work        // what the last lexical scoring did
	// cut, for the cut of a sharded pick, which opens no index, holds the set's metadata and the
	// target rows counted by the shards; nil otherwise.
	cut *cutInputs
}

// cutInputs is what the cut of a sharded pick knows of the index and the target from the shards.
type cutInputs struct {
	meta                     index.Meta
	targets, targetsRejected int
}

// meta is the index's metadata: the set's.
func (p *picked) meta() index.Meta {
	if p.cut != nil {
		return p.cut.meta
	}
	return p.ix.Meta()
}

// targetCounts are the target rows used and quarantined.
func (p *picked) targetCounts() (int, int) {
	if p.cut != nil {
		return p.cut.targets, p.cut.targetsRejected
	}
	return len(p.targets), len(p.trej)
}

// TargetCopy is the name a target that could be read only once (stdin, a pipe) is kept under in
// the run folder, so that the run can be explained and verified later.
const TargetCopy = "target.jsonl"

// keepPipedTarget copies a target that is not a regular file into the run's working folder, made
// now for it, and reads it from there; a regular file is read where it is.
func (p *picked) keepPipedTarget() error {
	p.target = p.opt.Target
	var src io.Reader
	if p.opt.Target == "-" {
		src = p.opt.Stdin
		if src == nil {
			src = os.Stdin
		}
	} else if fi, err := os.Stat(p.opt.Target); err != nil || fi.Mode().IsRegular() {
		return nil // a missing target is reported by the reader, with its context
	} else {
		f, err := os.Open(p.opt.Target)
		if err != nil {
			return fmt.Errorf("read target %s: %w", p.opt.Target, err)
		}
		defer f.Close()
		src = f
	}
	tmp, err := atomicdir.Temp(p.opt.Out)
	if err != nil {
		return err
	}
	p.tmp, p.target = tmp, filepath.Join(tmp, TargetCopy)
	if _, err := writeHashed(p.target, filepath.Join(p.opt.Out, TargetCopy), func(w *bufio.Writer) error { _, err := io.Copy(w, src); return err }); err != nil {
		return fmt.Errorf("read target %s: %w", p.opt.Target, err)
	}
	return nil
}

// Pick opens the index, reads and analyses the target rows, scores every indexed row, charges the
// selection, keeps rows from the top while the ledger stays within the budget, and writes the run
// folder opt.Out, published only when complete. Nothing is written when it fails.
func Pick(ctx context.Context, opt Options) (*Result, error) {
	if opt.KeptFormat != "" && !slices.Contains(KeptFormats(), opt.KeptFormat) {
		return nil, fmt.Errorf("kept format %q: give %s", opt.KeptFormat, strings.Join(KeptFormats(), ", "))
	}
	if err := CheckSets(opt); err != nil {
		return nil, err
	}
	if err := CheckOut(opt); err != nil {
		return nil, err
	}
	ix, err := index.Open(opt.Index)
	if err != nil {
		return nil, err
	}
	defer ix.Close()
	p := &picked{opt: &opt, ix: ix}
	defer func() {
		if p.tmp != "" {
			atomicdir.Discard(p.tmp) // published by now if all went well, so gone already
		}
	}()
	pick := p.one
	if len(opt.ExtraTargets) > 0 {
		pick = p.several
	}
	if err := pick(ctx); err != nil {
		return nil, cmp.Or(ix.Err(), err) // the damage a read met, not what its zeros led to
	}
	if err := p.write(); err != nil {
		return nil, cmp.Or(ix.Err(), err)
	}
	return &p.out, nil
}

// one picks for one target set.
func (p *picked) one(ctx context.Context) error {
	if err := p.keepPipedTarget(); err != nil {
		return err
	}
	if err := p.readTargets(p.opt.Target); err != nil {
		return err
	}
	if err := p.checkMemory(); err != nil {
		return err
	}
	if p.takesDups(p.ix.DupSettings()) {
		// A set finds its duplicates from its segments' sketches, which needs no score: on another
		// core while the rows are scored. The guard takes the result (or the error) when it asks;
		// the pick waits for it before it returns, since the index is closed after.
		done := make(chan struct{})
		go func() { defer close(done); _, _ = p.ix.Duplicates(ctx) }()
		defer func() { <-done }()
	}
	if err := p.score(ctx); err != nil {
		return err
	}
	if err := p.guard(ctx); err != nil {
		return err
	}
	if err := p.applyGuards(); err != nil {
		return err
	}
	// The guards read the clusters and the walk reads the rows' records, each file in a pass of its
	// own: its pages go once it is done, before the next pass maps others (40 million rows hold 0.8
	// and 1.4 GB of them).
	p.ix.ReleasePages()
	if err := p.keep(); err != nil {
		return err
	}
	p.ix.ReleasePages()
	return nil
}

// readTargets resolves the target's text spec and id field against the index's and reads the
// target rows from p.target with the index's analyzer; errors name the target as shown.
func (p *picked) readTargets(shown string) error {
	opt, m := p.opt, p.ix.Meta()
	if opt.Analyzer != "" && opt.Analyzer != m.Analyzer {
		return fmt.Errorf("index %s was built with the %s analyzer, not %s as --analyzer asks: rebuild it with --analyzer %s, or drop --analyzer to score with %s",
			opt.Index, m.Analyzer, opt.Analyzer, opt.Analyzer, m.Analyzer)
	}
	an, err := p.ix.NewAnalyzer()
	if err != nil {
		return err
	}
	p.spec = opt.TargetText
	if p.spec == "" {
		p.spec = m.Text
	} else if sp, err := jsonl.ParseSpec(p.spec); err == nil && sp.String() != m.Text && !opt.OtherText {
		// Target rows read from other fields than the pool's are scored against text of another kind;
		// that is sometimes meant (the target file has other field names), so it must be said.
		return fmt.Errorf("--target-text %s differs from the index's text fields %s: pass --other-target-text if the target's fields really are named otherwise, or --index-settings (or no --target-text) to read it like the pool",
			sp, m.Text)
	}
	p.tid = opt.TargetID
	if p.tid == "" {
		p.tid = m.IDField
	}
	p.targets, p.trej, err = index.ReadTargets(p.target, p.spec, p.tid, an, m.MaxRowBytes)
	if err != nil {
		return err
	}
	switch {
	case len(p.targets) == 0 && len(p.trej) == 0:
		return fmt.Errorf("read target %s: the target set is empty: no rows to pick for; nothing was written", shown)
	case len(p.targets) == 0:
		hint := ""
		if strings.HasPrefix(p.trej[0].Reason, "no text") {
			// Most often the target file names its fields otherwise than the pool does.
			hint = fmt.Sprintf(" (the target was read with the text fields %s; if its rows name them otherwise, give --target-text FIELDS with --other-target-text)", p.spec)
		}
		return fmt.Errorf("read target %s: no usable target rows: all %d quarantined, the first at line %d: %s%s; nothing was written",
			shown, len(p.trej), p.trej[0].Line, p.trej[0].Reason, hint)
	}
	return nil
}

// CheckTargetFlags refuses, in the words of the flags that give them, an analyzer sluice does not
// have, a target text spec that does not parse and a target id field that is no path.
func CheckTargetFlags(opt Options) error {
	if opt.Analyzer != "" && !slices.Contains(analysis.Names(), opt.Analyzer) {
		return fmt.Errorf("--analyzer %q: give %s", opt.Analyzer, strings.Join(analysis.Names(), " or "))
	}
	if opt.TargetText != "" {
		if _, err := jsonl.ParseSpec(opt.TargetText); err != nil {
			return fmt.Errorf("--target-text: %w", err)
		}
	}
	if _, err := jsonl.NewExtractor(jsonl.Shapes()[0], opt.TargetID, ""); err != nil {
		return fmt.Errorf("--target-id: %w", err)
	}
	return nil
}

// tokens is row r's token count: the training cost the ledger charges for it. It is read from the
// index's row record each time rather than kept, which would cost 8 bytes a pool row.
func (p *picked) tokens(r int) int64 { return rowTokens(p.ix, r) }

// rowTokens is a row's tokens as the ledger charges them: as the index counted them (a field or a
// tokenizer), else estimated from the text's bytes.
func rowTokens(ix *index.Index, r int) int64 { return charged(ix.RowTokens(r)) }

// charged is the tokens charged for a row of t tokens as counted (ok), else of tb bytes of text.
func charged(t int64, ok bool, tb int64) int64 {
	if !ok {
		t = int64(budget.EstimateTokens(int(tb)))
	}
	return t
}

// keep prices every row's training, keeps rows from the top under the budget and completes the
// ledger.
func (p *picked) keep() error {
	opt, led := p.opt, p.led
	unit, err := p.unit()
	if err != nil {
		return err
	}
	so := opt.Select
	so.Budget, so.Fixed, so.Barred, so.Unit = opt.Budget, led.Selection(), p.barred, unit
	if so.Group, so.Caps, err = p.groupCaps(unit, so.Fixed); err != nil {
		return err
	}
	if !lexical(opt.method()) {
		so.KeepUnmatched = true
		if !opt.MinScoreSet {
			so.MinScore = math.Inf(-1)
		}
	}
	if opt.MinScore.Kind != "" {
		so.MinScore = opt.MinScore.resolve(p.scores, p.barred, lexical(opt.method()))
		opt.Select.MinScore = so.MinScore
		led.Notes = append(led.Notes, fmt.Sprintf("min-score: %s of the scored rows, %v", opt.MinScore, so.MinScore))
	}
	// Costs are tokens, read from the index as the walk meets each row rather than held for all.
	// The walk asks the rows in rank order, at random: each record is read alone, not through the
	// mapping, which would make nearly every page of the rows file resident (1.4 GB at 40M rows).
	var rerr error
	dec, sum, err := selection.PickFunc(p.scores, func(r int) float64 {
		t, ok, tb, err := p.ix.ReadRowTokens(r)
		if err != nil {
			rerr = cmp.Or(rerr, err)
			return math.NaN() // fails the walk, with rerr said
		}
		return float64(charged(t, ok, tb))
	}, so)
	if rerr != nil {
		return rerr
	}
	if err != nil {
		return err
	}
	p.dec = dec
	p.tally()
	led.Stop = stopText(sum, so)
	if sum.Stop == selection.StopMinScore && opt.MinScore.Kind != "" {
		led.Stop += " (" + opt.MinScore.String() + ")"
	}
	p.finish(unit, sum)
	return nil
}

// costs are every row's training cost for the selection, in tokens at unit FLOPs each; they
// refuse a selection that alone passes the budget.
func (p *picked) costs() (float64, []float64, error) {
	unit, err := p.unit()
	if err != nil {
		return 0, nil, err
	}
	costs := make([]float64, p.ix.NumRows())
	for r := range costs {
		costs[r] = float64(p.tokens(r))
	}
	return unit, costs, nil
}

// unit is the FLOPs of training on one token; it refuses a selection that alone passes the budget.
func (p *picked) unit() (float64, error) {
	opt, led := p.opt, p.led
	if led.Selection() > opt.Budget {
		// Nothing can be kept, and a run folder would show a ledger over its budget: say so instead.
		return 0, fmt.Errorf("the selection cost alone, %s FLOPs (%s), exceeds the budget of %s FLOPs: raise the budget; nothing was written",
			budget.FormatFLOPs(led.Selection()), strings.Join(selectionWords(led), " + "), budget.FormatFLOPs(opt.Budget))
	}
	// Costs are tokens at one price per token over every epoch, so that the fit test and the
	// ledger's training line are the same product and the ledger never passes its budget by a
	// rounding.
	return budget.TrainFLOPs(opt.TrainParams, 1, opt.Epochs), nil
}

// tally counts what p.dec kept and dropped, in all and by pool file.
func (p *picked) tally() {
	m := p.ix.Meta()
	r := &p.out
	r.Sources = make([]SourceTally, len(m.Sources))
	for i, src := range m.Sources {
		r.Sources[i].File = src.Path
	}
	r.Dropped = map[string]int{}
	for row, d := range p.dec {
		if row%(1<<16) == 0 {
			p.ix.ReleaseRows(row-(1<<16), row) // the records read so far, in a pass of their own
		}
		if !d.Kept {
			r.Dropped[d.Reason.String()]++
		}
		st := &r.Sources[p.ix.RowLocation(row).Source]
		st.Rows++
		st.Tokens += p.tokens(row)
		if d.Kept {
			r.Kept = append(r.Kept, row)
			r.KeptTokens += p.tokens(row)
			st.KeptRows++
			st.KeptTokens += p.tokens(row)
		}
	}
}

// finish completes the ledger, with the training of the kept rows and the notes, and the result.
func (p *picked) finish(unit float64, sum selection.Summary) {
	opt, m, led, r := p.opt, p.meta(), p.led, &p.out
	n := int(m.Rows)
	targets, trej := p.targetCounts()
	led.AddTraining(fmt.Sprintf("train %s-parameter model on kept rows", budget.FormatCount(opt.TrainParams)), "token", float64(r.KeptTokens), unit,
		fmt.Sprintf("6 x %g parameters x %d tokens x %g epochs", opt.TrainParams, r.KeptTokens, opt.Epochs))
	tokSrc := "UTF-8 bytes of the text fields / 4, rounded up (rule of thumb for English, common practice)"
	switch {
	case m.TokensField != "":
		tokSrc = fmt.Sprintf("field %q of each row", m.TokensField)
	case m.Tokenizer != "":
		tokSrc = fmt.Sprintf("counted at index time with the tokenizer %s (SHA-256 %.12s), each text field alone", m.Tokenizer, m.TokenizerSHA256)
	}
	led.Notes = append(led.Notes,
		"budget: "+opt.BudgetHow,
		"tokens per row: "+tokSrc,
		"selection cost is charged over the whole pool before any row is kept",
		reconciliation(m, targets, trej),
	)
	r.Notes = p.guardNotes()
	led.Notes = append(led.Notes, r.Notes...)
	led.Notes = append(led.Notes, p.setNotes(unit)...)
	if opt.Prefilter.active() {
		led.Notes = append(led.Notes, fmt.Sprintf("cascade: %d of %d rows passed the prefilter %s; the others have reason prefilter and no score", p.survivors, n, opt.Prefilter))
	}
	if m.DuplicateIDs > 0 {
		led.Notes = append(led.Notes, fmt.Sprintf("ids: %d rows repeat an earlier row's id; scores.jsonl is in input order, so its n-th line is the n-th indexed row", m.DuplicateIDs))
	}
	r.Settings = p.settings()
	r.Index, r.Out = opt.Index, opt.Out
	r.Meta, r.Rows, r.Targets, r.TargetsRejected = m, n, targets, trej
	r.Ledger, r.Summary = led, sum
}

// settings are the pick's settings as the manifest records them.
func (p *picked) settings() Settings {
	o := p.opt
	st := Settings{
		Analyzer: p.meta().Analyzer, TargetText: p.spec, TargetID: p.tid,
		Method: o.method(), Aggregate: o.Params.Aggregate.String(),
		K1: o.Params.K1, B: o.Params.B, Attribute: !o.Params.SkipBest,
		Budget: o.Budget, BudgetHow: o.BudgetHow, TrainParams: o.TrainParams, Epochs: o.Epochs,
		Fill: o.Select.Fill, MaxRows: o.Select.MaxRows, MinScore: o.Select.MinScore, Kept: KeptName(o.Compress), KeptFormat: o.KeptFormat,
		Prefilter: o.Prefilter.String(), Guards: o.Guards,
	}
	if !lexical(st.Method) {
		st.Aggregate, st.K1, st.B, st.Attribute = "", 0, 0, false
		st.NoScoreFloor = !o.MinScoreSet
	}
	switch st.Method {
	case MethodNgram:
		st.Ngram = &o.Ngram
	case MethodScores:
		sc := o.Scores
		st.Scores = &sc
		st.Join, st.Missing = o.Scores.Join.String(), o.Scores.Missing.String()
	case MethodVectors:
		v := o.Vectors
		st.Vectors = &v
		st.Aggregate = o.Params.Aggregate.String()
	}
	return st
}

// corpus lets the scorer read an index's posting lists through index cursors, a span of rows at a
// time, when they do not all fit its memory.
type corpus struct{ *index.Index }

func (c corpus) Cursor(term string) (score.PostingCursor, error) { return c.NewCursor(term), nil }

func selectionWords(l *budget.Ledger) []string {
	var w []string
	for _, line := range l.Lines {
		if line.Kind == budget.KindSelection {
			w = append(w, fmt.Sprintf("%s: %s", line.What, budget.FormatFLOPs(line.FLOPs)))
		}
	}
	return w
}

// stopText says in words why the pick stopped keeping rows.
func stopText(s selection.Summary, o selection.Options) string {
	switch s.Stop {
	case selection.StopBudget:
		return fmt.Sprintf("budget: the row ranked %d did not fit in what was left", s.StopRank)
	case selection.StopExhausted:
		return "every row with a score was considered"
	case selection.StopMaxRows:
		return fmt.Sprintf("max-rows: %d rows kept", o.MaxRows)
	case selection.StopMinScore:
		return fmt.Sprintf("min-score: the rows from rank %d on score below %g", s.StopRank, o.MinScore)
	case selection.StopNoMatch:
		return fmt.Sprintf("no-match: the rows from rank %d on share no term with the target rows", s.StopRank)
	case selection.StopFixedOverBudget:
		return "fixed-over-budget: the selection cost alone exceeds the budget"
	case selection.StopMaxCount:
		return fmt.Sprintf("max-tokens: the row ranked %d would pass %g kept tokens", s.StopRank, o.MaxCount)
	}
	return s.Stop.String()
}

// Folder describes the kind of folder a run is, for atomicdir's checks: a manifest that sluice wrote, and
// nothing but a run's files.
func Folder() atomicdir.Kind {
	return atomicdir.Kind{Name: "run", Mark: ManifestFile,
		IsOur: func(b []byte) bool {
			var m struct {
				Sluice   string   `json:"sluice"`
				Settings Settings `json:"settings"`
				Files    map[string]string
			}
			return json.Unmarshal(b, &m) == nil && m.Sluice != "" && m.Settings.Method != "" && m.Files != nil
		},
		Holds: func(name string) bool {
			switch name {
			case ManifestFile, ScoresFile, LedgerFile, RejectedFile, TargetCopy, KeptName("none"), KeptName("gzip"), KeptName("zstd"):
				return true
			}
			return false
		}}
}

// CheckOut refuses, before any work is done, to write the run folder of opt anywhere but over
// nothing, an empty folder or an earlier run folder holding nothing else, and to replace or hold
// any input of the pick. A run folder may not be made inside an index or another run either.
func CheckOut(opt Options) error {
	in := append([]string{opt.Index, opt.Target}, opt.ExtraTargets...)
	return atomicdir.CheckOut(opt.Out, Folder(), append(in, opt.inputs()...), index.Folder(), Folder())
}

// PoolTokens counts the tokens of an index's rows as a pick charges them for training.
func PoolTokens(dir string) (float64, error) {
	ix, err := index.Open(dir)
	if err != nil {
		return 0, err
	}
	defer ix.Close()
	return IndexTokens(ix)
}

// IndexTokens is PoolTokens of an index already open.
func IndexTokens(ix *index.Index) (float64, error) {
	var t int64
	for r := 0; r < ix.NumRows(); r++ {
		t += rowTokens(ix, r)
	}
	if err := ix.Err(); err != nil { // a record whose block failed its check read as zeros
		return 0, err
	}
	if t == 0 {
		return 0, fmt.Errorf("index %s holds no tokens", ix.Dir())
	}
	return float64(t), nil
}

// MinScore is a score floor given relative to the scores: Kind "share" keeps rows scoring at least
// Value times the best score; "percentile" keeps rows scoring at least the Value-th percentile of
// the scored rows (p90 keeps about the best tenth); "knee" keeps the rows above where the sorted
// scores stop falling steeply (Knee). The zero value is a plain floor.
type MinScore struct {
	Kind  string  `json:"kind,omitempty"`
	Value float64 `json:"value,omitempty"`
	Plain float64 `json:"-"` // the floor when Kind is ""
}

func (m MinScore) String() string {
	if m.Kind == "knee" {
		return "the knee of the sorted scores, where they stop falling steeply"
	}
	if m.Kind == "share" {
		return fmt.Sprintf("%g%% of the best score", 100*m.Value)
	}
	return fmt.Sprintf("the %gth percentile", m.Value)
}

// ParseMinScore reads a floor: a number, a share of the best score ("50%"), or a percentile
// ("p90").
func ParseMinScore(s string) (MinScore, error) {
	var m MinScore
	switch {
	case s == "":
		return m, nil
	case s == "knee":
		return MinScore{Kind: "knee"}, nil
	case strings.HasSuffix(s, "%"):
		v, err := strconv.ParseFloat(strings.TrimSuffix(s, "%"), 64)
		if err != nil || !(v > 0 && v <= 100) {
			return m, fmt.Errorf("%q: a share of the best score is above 0%% and at most 100%%", s)
		}
		return MinScore{Kind: "share", Value: v / 100}, nil
	case strings.HasPrefix(s, "p"):
		v, err := strconv.ParseFloat(s[1:], 64)
		if err != nil || !(v >= 0 && v < 100) {
			return m, fmt.Errorf("%q: a percentile is p0 to p99.9", s)
		}
		return MinScore{Kind: "percentile", Value: v}, nil
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return m, fmt.Errorf("%q: give a finite score, a share of the best (50%%), a percentile (p90) or knee", s)
	}
	return MinScore{Plain: v}, nil
}

// resolve works out the floor from the rows that may be kept (for a lexical method, those sharing
// a term with the target).
func (m MinScore) resolve(scores []float64, barred []selection.Reason, lexical bool) float64 {
	var s []float64
	for r, v := range scores {
		if (barred == nil || barred[r] == selection.Kept) && !math.IsNaN(v) && (!lexical || v > 0) {
			s = append(s, v)
		}
	}
	if len(s) == 0 {
		return math.Inf(1)
	}
	slices.Sort(s)
	if m.Kind == "knee" {
		return Knee(s)
	}
	if m.Kind == "share" {
		best := s[len(s)-1]
		if best < 0 {
			return best / m.Value // a share of a negative best lies below it
		}
		return m.Value * best
	}
	return s[int(math.Floor(m.Value/100*float64(len(s)-1)))]
}

// Knee is the score at the knee of scores sorted ascending, read from the best down: where the
// curve of score against rank bends from a steep fall to a flat tail. It is the point of the
// Kneedle method (Satopää, Albrecht, Irwin and Raghavan, 2011) for a decreasing convex curve: with
// rank and score both scaled to [0, 1], the point farthest below the straight line from the best
// row to the last, that is, the least scaled rank plus scaled score; ties go to the better rank.
// One score, or all equal, gives the lowest score: there is no bend, so nothing is cut.
func Knee(ascending []float64) float64 {
	n := len(ascending)
	lo, hi := ascending[0], ascending[n-1]
	if n < 3 || hi == lo {
		return lo
	}
	best, at := math.Inf(1), hi
	for i := range n {
		v := ascending[n-1-i] // the i-th best
		d := float64(i)/float64(n-1) + (v-lo)/(hi-lo)
		if d < best {
			best, at = d, v
		}
	}
	return at
}

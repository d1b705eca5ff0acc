package index

import (
	"bufio"
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"hash"
	"hash/crc32"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"unicode/utf8"
	"unsafe"

	"sluice/index/analysis"
	"sluice/index/atomicdir"
	"sluice/index/decontam"
	"sluice/index/dedup"
	"sluice/index/jsonl"
	"sluice/index/tokens"
)

// Options control a build. The zero value is usable: the text shape is detected, ids are file:line,
// the analyzer is english and memory is bounded at DefaultMem.
type Options struct {
	Text   string // field spec, e.g. "prompt,completion"; "" detects a known shape
	ID     string // field holding the row id; "" uses file:line
	Tokens string // field holding a token count for the ledger; "" estimates from text bytes
	// Tokenizer names a tokenizer file (see package tokens) that counts each row's tokens for the
	// ledger: the text fields each counted alone, added. It and Tokens exclude each other.
	Tokenizer   string
	Analyzer    string // analysis.Names(); "" is "english"
	Mem         int64  // bytes of dictionaries (terms, postings, tables) held in memory before sorted runs are spilled to disk
	Workers     int    // goroutines analysing rows; 0 is GOMAXPROCS
	MaxRowBytes int    // longer lines are quarantined without being loaded; 0 is DefaultMaxRowBytes
	Strict      bool   // stop at the first bad row instead of quarantining it
	// DryRun reads, parses and analyses every row and counts what an index would hold, but builds
	// and writes nothing: a check of a pool, and the floor a build is measured against.
	DryRun bool
	// Progress, when set, is called from one goroutine with the number of pool bytes read since
	// the previous call.
	Progress func(n int64)
	// Within lists kinds of folder the index may not be made inside, besides an index (a run, say,
	// whose owner would find a stranger in it).
	Within []atomicdir.Kind
	// Inputs lists the command's inputs other than the pool files, which the index may not replace
	// or hold either: the segments of an index set being indexed again as one, say.
	Inputs []string
	// NearDup is the Jaccard similarity at or above which rows are near duplicates, in (0, 1]; 0
	// takes DefaultNearDup. The build finds exact and near duplicates as a pick would (see
	// dedup.ForThreshold) and stores each row's cluster, so that picks at the same threshold need not
	// hash the pool again. NoDups finds none.
	NearDup float64
	NoDups  bool
	// Exclude names evaluation files: every row is checked, as it is indexed, for a word n-gram of
	// ExcludeN words (0 takes decontam.DefaultN) that a row of one of them has, and the rows that
	// share one are recorded (contaminated.jsonl), so that a pick excluding the same files need not
	// read the pool again. The files are inputs: the index may not replace them.
	Exclude  []string
	ExcludeN int
	// Command, when set, is recorded in meta.json as the command line that made the index, so a
	// run's manifest (which hashes meta.json) says how its index was built.
	Command []string

	batchRows int // rows per batch handed to a worker; tests make it small to force many spills
	// dupSlots is the number of blocks of the sketches file the search for near duplicates keeps
	// of the pairs' first rows (an eighth of Mem when 0); tests make it 1, so that they are read
	// again and again.
	dupSlots int
	// trace, when set, is told when the merge starts ("merge") and ends ("merged"); benchmarks time it.
	trace func(event string)
}

// Defaults for Options.
const (
	DefaultMem         = 512 << 20
	DefaultMaxRowBytes = 64 << 20
	DefaultAnalyzer    = "sklearn"
	DefaultNearDup     = 0.8
)

// Stats describe a finished build.
type Stats struct {
	Meta
	Runs int // sorted runs spilled to disk before the merge
	// FirstDuplicate is the first row whose id an earlier row already had, or nil.
	FirstDuplicate *Duplicate
	// Quarantined counts, per source, the rows set aside, with the first of them.
	Quarantined []SourceQuarantine
	// DupMem is the most the duplicate finder held, out of Mem, the build's Options.Mem.
	DupMem, Mem int64
}

// RowError is a bad row met with Options.Strict.
type RowError struct {
	File   string
	Line   int64
	Offset int64
	Reason string
	Err    error
}

func (e *RowError) Error() string {
	return fmt.Sprintf("%s:%d: %s", e.File, e.Line, e.Reason)
}

func (e *RowError) Unwrap() error { return e.Err }

const (
	batchBytes = 4 << 20
	batchRows  = 1 << 14
	localBits  = 24 // a posting key is batch<<localBits | row within batch
	sampleRows = 100
)

type lineRef struct {
	start, end int   // in batch.buf
	off        int64 // in the decompressed source
	n          int   // bytes including the newline
	line       int64
	tooLong    bool
}

type batch struct {
	seq   int
	src   int
	buf   []byte
	lines []lineRef
}

// rowRec is one fixed-size record of the rows file.
type rowRec struct {
	off       uint64
	n         uint32
	line      uint32
	src       uint32
	alen      uint32
	textBytes uint32
	tokens    uint32 // noTokens when the row gave no count
	crc       uint32
}

const (
	rowRecSize = 36
	noTokens   = ^uint32(0)
)

func (r *rowRec) put(b []byte) {
	binary.LittleEndian.PutUint64(b[0:], r.off)
	binary.LittleEndian.PutUint32(b[8:], r.n)
	binary.LittleEndian.PutUint32(b[12:], r.line)
	binary.LittleEndian.PutUint32(b[16:], r.src)
	binary.LittleEndian.PutUint32(b[20:], r.alen)
	binary.LittleEndian.PutUint32(b[24:], r.textBytes)
	binary.LittleEndian.PutUint32(b[28:], r.tokens)
	binary.LittleEndian.PutUint32(b[32:], r.crc)
}

func getRowRec(b []byte) rowRec {
	return rowRec{
		off:       binary.LittleEndian.Uint64(b[0:]),
		n:         binary.LittleEndian.Uint32(b[8:]),
		line:      binary.LittleEndian.Uint32(b[12:]),
		src:       binary.LittleEndian.Uint32(b[16:]),
		alen:      binary.LittleEndian.Uint32(b[20:]),
		textBytes: binary.LittleEndian.Uint32(b[24:]),
		tokens:    binary.LittleEndian.Uint32(b[28:]),
		crc:       binary.LittleEndian.Uint32(b[32:]),
	}
}

var errTooLong = errors.New("row too long")

// Errors of a pool as a whole; test with errors.Is.
var (
	// ErrEmptyPool means the pool files hold no row at all, only blank lines or nothing.
	ErrEmptyPool = errors.New("the pool is empty")
	// ErrNoRows means every row of the pool was quarantined, so there is nothing to index.
	ErrNoRows = errors.New("no row could be indexed")
)

// Reject is a quarantined row, as written to rejected.jsonl.
type Reject struct {
	File   string `json:"file"`
	Line   int64  `json:"line"`
	Offset int64  `json:"offset"` // of the row's first byte in the decompressed stream
	Length int64  `json:"length"` // bytes of the row in the stream, its newline included
	Reason string `json:"reason"`
	// Raw is the row's bytes, at most the first MaxRawBytes of them (none for a row longer than the
	// row limit, which is never loaded). Valid UTF-8 is kept as it is; otherwise RawEscaped is set
	// and Raw is the body of a Go string literal (strconv.Unquote of it in double quotes gives the
	// bytes back), so that every byte survives JSON.
	Raw        string `json:"raw"`
	RawEscaped bool   `json:"raw_escaped,omitempty"`
}

// MaxRawBytes bounds the bytes of a bad row kept in its Reject, so a quarantine of long rows stays
// readable and small.
const MaxRawBytes = 64 << 10

func newReject(file string, line, off int64, n int, reason string, raw []byte) Reject {
	r := Reject{File: file, Line: line, Offset: off, Length: int64(n), Reason: reason}
	r.Raw, r.RawEscaped = quoteRaw(raw)
	return r
}

type batchOut struct {
	seq     int
	src     int
	rows    []rowRec
	ids     [][]byte
	rejects []Reject
	missing map[string]*missCount // by path of the text spec, the rows lacking it
	blank   int64
	words   int64       // words checked against the evaluation files
	longest int         // the most words a row had
	hits    []rowHit    // rows that share an n-gram with them
	keys    []dedup.Key // by row, when duplicates are found
	signed  []bool      // by row: whether the row has a signature in sigs
	sigs    []uint32    // K values by row signed
	// signWork is the signing work of each row signed.
	signWork []dedup.Work
	err      error
}

// maxWorkers bounds Options.Workers: each worker holds a share of Mem and batches of its own, so a
// mistyped count would exhaust memory before any work was done.
const maxWorkers = 256

// Check refuses options that name a field, spec, analyzer or threshold that cannot be, each error
// naming its command-line flag, before any work.
func (opt Options) Check() error {
	if opt.Text != "" {
		if _, err := jsonl.ParseSpec(opt.Text); err != nil {
			return fmt.Errorf("--text: %w", err)
		}
	}
	if _, err := jsonl.NewExtractor(jsonl.Shapes()[0], opt.ID, ""); err != nil {
		return fmt.Errorf("--id: %w", err)
	}
	if _, err := jsonl.NewExtractor(jsonl.Shapes()[0], "", opt.Tokens); err != nil {
		return fmt.Errorf("--tokens: %w", err)
	}
	if _, err := analysis.New(opt.Analyzer); opt.Analyzer != "" && err != nil {
		return fmt.Errorf("--analyzer: %w", err)
	}
	if t := opt.NearDup; !opt.NoDups && t != 0 && !(t > 0 && t <= 1) {
		return fmt.Errorf("--near-dup %v: give a Jaccard similarity above 0 and at most 1", t)
	}
	if opt.Tokens != "" && opt.Tokenizer != "" {
		return errors.New("give --tokens (a field) or --tokenizer (a file), not both")
	}
	if opt.Workers < 0 || opt.Workers > maxWorkers {
		return fmt.Errorf("--workers %d: give 0 (one per core) to %d", opt.Workers, maxWorkers)
	}
	if opt.ExcludeN < 0 {
		return fmt.Errorf("--exclude-ngram %d: give a number of words, at least 1", opt.ExcludeN)
	}
	if opt.DryRun && len(opt.Exclude) > 0 {
		// Silence would read as "no row is contaminated".
		return fmt.Errorf("--exclude has no use with --dry-run, which writes no index and checks no row against evaluation files")
	}
	return nil
}

// Build reads the pool files in order and publishes an index at dir. An existing index at dir is
// replaced only once the new one is complete; a folder that is not an index is never overwritten.
func Build(ctx context.Context, dir string, sources []string, opt Options) (*Stats, error) {
	if len(sources) == 0 {
		return nil, errors.New("build index: no pool files")
	}
	if opt.Analyzer == "" {
		opt.Analyzer = DefaultAnalyzer
	}
	if opt.Mem <= 0 {
		opt.Mem = DefaultMem
	}
	if opt.Workers <= 0 {
		opt.Workers = runtime.GOMAXPROCS(0)
	}
	if opt.MaxRowBytes <= 0 {
		opt.MaxRowBytes = DefaultMaxRowBytes
	}
	if opt.batchRows <= 0 || opt.batchRows > batchRows {
		opt.batchRows = batchRows
	}
	if _, err := jsonl.NewExtractor(jsonl.Shapes()[0], opt.ID, opt.Tokens); err != nil {
		return nil, fmt.Errorf("build index: %w", err)
	}
	if err := opt.Check(); err != nil {
		return nil, fmt.Errorf("build index: %w", err)
	}
	probe, err := analysis.New(opt.Analyzer)
	if err != nil {
		return nil, fmt.Errorf("build index: %w", err)
	}
	var spec jsonl.Spec
	if opt.Text != "" {
		if spec, err = jsonl.ParseSpec(opt.Text); err != nil {
			return nil, fmt.Errorf("build index: --text: %w", err)
		}
	}
	stdinCount := 0
	for _, s := range sources {
		if s == "-" {
			stdinCount++
		}
	}
	if stdinCount > 1 {
		return nil, errors.New("build index: stdin (-) given more than once")
	}
	if opt.DryRun && dir == "" {
		dir = filepath.Join(os.TempDir(), "sluice-dry-run")
	} else if err := atomicdir.CheckOut(dir, Folder(), slices.Concat(sources, opt.Inputs, opt.Exclude), append(opt.Within, Folder())...); err != nil {
		return nil, fmt.Errorf("build index: %w", err)
	}
	var tok *tokens.Tokenizer
	if opt.Tokenizer != "" {
		if opt.Tokens != "" {
			return nil, errors.New("build index: a token field and a tokenizer both count tokens: give one")
		}
		if tok, err = tokens.Load(opt.Tokenizer); err != nil {
			return nil, fmt.Errorf("build index: %w", err)
		}
	}
	tmp, err := atomicdir.Temp(dir)
	if err != nil {
		return nil, fmt.Errorf("build index: %w", err)
	}
	published := false
	defer func() {
		if !published {
			atomicdir.Discard(tmp)
		}
	}()
	b := &builder{
		dir:   dir,
		opt:   opt,
		tmp:   tmp,
		wd:    workDir{tmp: tmp, dir: dir},
		spec:  spec,
		meta:  Meta{Format: Format, Version: Version, Analyzer: probe.Name(), AnalyzerChain: probe.Describe(), IDField: opt.ID, TokensField: opt.Tokens, MaxRowBytes: opt.MaxRowBytes, Command: opt.Command},
		paths: sources,
		tok:   tok,
		held:  map[int]*heldHead{},
	}
	defer b.closeHeld()
	if tok != nil {
		b.meta.Tokenizer = opt.Tokenizer
		if b.meta.TokenizerSHA256, err = FileSHA256(opt.Tokenizer); err != nil {
			return nil, fmt.Errorf("build index: %w", err)
		}
	}
	if opt.Text == "" {
		if err := b.detectShapes(ctx); err != nil {
			return nil, err
		}
	}
	b.meta.Text = b.spec.String()
	b.meta.Version = versionFor(b.spec)
	if len(opt.Exclude) > 0 && !opt.DryRun {
		if err := b.startExclude(); err != nil {
			return nil, err
		}
	}
	st, err := b.run(ctx)
	if err != nil {
		return nil, err
	}
	if opt.DryRun {
		return st, nil
	}
	if err := atomicdir.Publish(tmp, dir); err != nil {
		return nil, err
	}
	published = true
	return st, nil
}

type builder struct {
	dir   string // where the index is published
	opt   Options
	tmp   string
	wd    workDir
	spec  jsonl.Spec
	meta  Meta
	tok   *tokens.Tokenizer // counts rows' tokens; nil without Options.Tokenizer
	paths []string
	// detected is, by source, the shape found in its first rows when no spec was given ("" for a
	// file of blank lines); held the bytes detection read of each stream, to be read again.
	detected []string
	held     map[int]*heldHead

	workers     []*worker
	freeBatches chan *batch // batches workers are done with; its capacity bounds how many exist
	batches     int         // batches made so far
	maxBatches  int
	base        []int64 // first row number of each batch
	srcRows     map[int]int64
	anyRow      bool    // the reader met a line that is not blank
	firstReject *Reject // the collector's first quarantined row
	quarantined []SourceQuarantine
	idHashes    []uint64 // by row, to find repeated ids
	firstDup    *Duplicate
	dups        *dupFinder    // nil without duplicates
	eval        *decontam.Set // the evaluation files' n-grams; nil without Options.Exclude
	// dupMem is what dups holds, which the workers' dictionaries give up of Options.Mem.
	dupMem  atomic.Int64
	dupPeak int64
}

func (b *builder) run(ctx context.Context) (*Stats, error) {
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()

	batches := make(chan *batch, b.opt.Workers*2)
	outs := make(chan *batchOut, b.opt.Workers*2)
	runDir := b.wd.path("runs")
	if err := os.Mkdir(runDir, 0o755); err != nil {
		return nil, b.wd.err("build index: make", err)
	}
	if !b.opt.NoDups && !b.opt.DryRun {
		var err error
		if b.dups, err = newDupFinder(b.opt.NearDup, b.wd, filepath.Join(runDir, "keys")); err != nil {
			return nil, err
		}
		defer b.dups.abort()
	}
	// A worker's share of Options.Mem is what the duplicate finder leaves of half of it, split
	// evenly: Go's collector lets the heap grow to about twice what is live (GOGC=100), so
	// dictionaries filled to all of Options.Mem would take the process to twice it. The
	// dictionaries keep an eighth of Options.Mem whatever the finder holds: once its exact groups
	// pass the bound the build is past it anyway (and says so), and dictionaries of nothing would
	// spill at every batch, 17,052 runs for 40 million short rows, for the merge to read together.
	share := func() int64 { return max(b.opt.Mem/8, b.opt.Mem/2-b.dupMem.Load()) / int64(b.opt.Workers) }
	// Enough batches for every worker to hold one and the channel to it two each, and one for the
	// reader.
	b.maxBatches = b.opt.Workers*3 + 2
	b.freeBatches = make(chan *batch, b.maxBatches)
	var wg sync.WaitGroup
	var werr error
	var werrOnce sync.Once
	var seen *seenKeys
	if b.dups != nil {
		seen = newSeenKeys()
	}
	for i := 0; i < b.opt.Workers; i++ {
		a, _ := analysis.New(b.opt.Analyzer)
		w := &worker{gen: 1, free: func(bt *batch) {
			select {
			case b.freeBatches <- bt:
			default:
			}
		}, id: i, an: a, dict: newTermTable(), memLimit: share, wd: b.wd, strict: b.opt.Strict, dry: b.opt.DryRun, needIDs: b.opt.ID != "", idField: b.opt.ID, tokField: b.opt.Tokens}
		if b.tok != nil {
			w.tok = b.tok.Clone()
		}
		var err error
		if b.dups != nil {
			if w.sign, err = newSignRow(b.dups.prm, seen); err != nil {
				return nil, fmt.Errorf("build index: %w", err)
			}
		}
		w.eval = b.eval
		if w.ex, err = jsonl.NewExtractor(b.spec, b.opt.ID, b.opt.Tokens); err != nil {
			return nil, fmt.Errorf("build index: %w", err)
		}
		b.workers = append(b.workers, w)
	}

	var readErr error
	readDone := make(chan struct{})
	go func() {
		defer close(readDone)
		defer close(batches)
		readErr = b.read(ctx, batches)
		if readErr != nil {
			cancel()
		}
	}()
	for _, w := range b.workers {
		wg.Add(1)
		go func(w *worker) {
			defer wg.Done()
			if err := w.work(ctx, batches, outs, b.paths); err != nil {
				werrOnce.Do(func() { werr = err })
				cancel()
				for range batches {
				}
			}
		}(w)
	}
	go func() { wg.Wait(); close(outs) }()

	cerr := b.collect(ctx, outs)
	if cerr != nil {
		cancel()
		for range outs {
		}
	}
	<-readDone
	if err := firstCause(readErr, werr, cerr); err != nil {
		return nil, err
	}
	for i := range b.meta.Sources {
		b.meta.Sources[i].Rows = b.srcRows[i]
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if b.meta.Rows == 0 && b.firstReject != nil {
		r := b.firstReject
		return nil, fmt.Errorf("build index: %w: read %d = indexed 0 + quarantined %d; the first, %s:%d: %s", ErrNoRows, b.meta.RowsRead, b.meta.RowsRejected, r.File, r.Line, r.Reason)
	}
	if err := b.findDuplicates(ctx); err != nil {
		return nil, err
	}
	if b.dups != nil {
		var work dedup.Work
		for _, w := range b.workers {
			work = work.Plus(w.sign.keyWork())
		}
		if err := b.dups.write(ctx, b, b.meta.Rows, work); err != nil {
			return nil, err
		}
		// The merge may have the memory back.
		b.dups = nil
		b.dupMem.Store(0)
	}
	if b.opt.DryRun {
		st := &Stats{Meta: b.meta, FirstDuplicate: b.firstDup, Quarantined: b.quarantined}
		return st, nil
	}
	var fw sync.WaitGroup
	for _, w := range b.workers {
		fw.Go(w.finish)
	}
	fw.Wait()
	st, err := b.merge(ctx)
	if err != nil {
		return nil, err
	}
	st.Quarantined = b.quarantined
	if err := os.RemoveAll(runDir); err != nil {
		return nil, b.wd.err("build index: remove", err)
	}
	if err := b.writeMeta(ctx); err != nil {
		return nil, err
	}
	st.Meta = b.meta
	st.FirstDuplicate = b.firstDup
	st.DupMem, st.Mem = b.dupPeak, b.opt.Mem
	return st, nil
}

// firstCause returns the first of errs that is not nil, preferring a real failure to the
// cancellation it caused elsewhere: a bad row met with Strict cancels the reader, whose "context
// canceled" must not hide the row's error.
func firstCause(errs ...error) error {
	var first error
	for _, err := range errs {
		if err == nil {
			continue
		}
		if !errors.Is(err, context.Canceled) {
			return err
		}
		if first == nil {
			first = err
		}
	}
	return first
}

// newBatch hands the reader an empty batch. Past the first few it waits for one a worker has
// finished with, which bounds the memory held in batches and saves zeroing a fresh buffer for each.
func (b *builder) newBatch(ctx context.Context, seq, src int) (*batch, error) {
	var bt *batch
	if b.batches >= b.maxBatches {
		select {
		case bt = <-b.freeBatches:
		case <-ctx.Done():
			return nil, ctx.Err()
		}
	} else {
		select {
		case bt = <-b.freeBatches:
		default:
			b.batches++
			bt = &batch{buf: make([]byte, 0, batchBytes+64<<10), lines: make([]lineRef, 0, 1024)}
		}
	}
	bt.seq, bt.src = seq, src
	bt.buf, bt.lines = bt.buf[:0], bt.lines[:0]
	return bt, nil
}

// read streams every source into batches. It owns b.meta.Sources until it returns.
func (b *builder) read(ctx context.Context, out chan<- *batch) error {
	seq := 0
	for si, path := range b.paths {
		src, err := b.openSource(ctx, si, path)
		if err != nil {
			return err
		}
		err = b.readSource(ctx, src, si, &seq, out)
		if cerr := src.close(); err == nil {
			err = cerr
		}
		if err != nil {
			return err
		}
		m := src.meta()
		if m.Stored == "" {
			if m.Locate, err = locate(b.dir, path); err != nil {
				return err
			}
		}
		if b.detected != nil {
			m.Detected = b.detected[si]
		}
		b.meta.Sources = append(b.meta.Sources, m)
	}
	if !b.anyRow {
		return fmt.Errorf("build index: no rows in %s, only blank lines or nothing: %w", strings.Join(b.paths, ", "), ErrEmptyPool)
	}
	return nil
}

// readSource splits one source into batches of lines, numbering the batches from *seq on.
func (b *builder) readSource(ctx context.Context, src *source, si int, seq *int, out chan<- *batch) error {
	path := b.paths[si]
	sc := jsonl.NewScanner(src.r, b.opt.MaxRowBytes)
	var sniff jsonl.Sniffer
	sniffing := true
	// cur is taken only when a line arrives, so a file ends with no batch held back.
	var cur *batch
	send := func() error {
		if cur == nil {
			return nil
		}
		select {
		case out <- cur:
		case <-ctx.Done():
			return ctx.Err()
		}
		*seq++
		cur = nil
		return nil
	}
	for sc.Scan() {
		if cur == nil {
			var err error
			if cur, err = b.newBatch(ctx, *seq, si); err != nil {
				return err
			}
		}
		line := sc.Bytes()
		ref := lineRef{off: sc.Offset(), n: sc.Len(), line: sc.Line(), tooLong: sc.TooLong()}
		if bytes.HasPrefix(line, utf8BOM) {
			// A byte-order mark is no part of the row: left in, a kept row would carry it into the
			// middle of kept.jsonl.
			line = line[len(utf8BOM):]
			ref.off += int64(len(utf8BOM))
			ref.n -= len(utf8BOM)
		}
		if !b.anyRow && (sc.TooLong() || !isBlank(line)) {
			b.anyRow = true
		}
		if sniffing && sniff.Line(line) {
			sniffing = false
			if err := sniff.Err(); err != nil {
				return fmt.Errorf("read %s: %w", path, err)
			}
		}
		ref.start = len(cur.buf)
		cur.buf = append(cur.buf, line...)
		ref.end = len(cur.buf)
		cur.lines = append(cur.lines, ref)
		if len(cur.buf) >= batchBytes || len(cur.lines) >= b.opt.batchRows {
			if err := send(); err != nil {
				return err
			}
		}
	}
	if err := sc.Err(); err != nil {
		return fmt.Errorf("read %s: %w", path, err)
	}
	if sniffing {
		if sniff.End(); sniff.Err() != nil {
			return fmt.Errorf("read %s: %w", path, sniff.Err())
		}
	}
	return send()
}

// closeHeld closes the streams detection read that the build did not go on to read.
func (b *builder) closeHeld() {
	for si, h := range b.held {
		if h.f != os.Stdin {
			h.f.Close()
		}
		delete(b.held, si)
	}
}

// locate returns how an index at dir finds the pool file path later: path itself when absolute,
// else path relative to dir. Both are first made absolute with their links resolved, so that the
// relative path holds from the folder itself however it is named later: through a link, by its
// real path, or as "." from inside it.
func locate(dir, path string) (string, error) {
	if filepath.IsAbs(path) {
		return path, nil
	}
	// dir may not exist yet, and a link at dir itself would be replaced by the index, not followed:
	// only its parent is resolved.
	clean := filepath.Clean(dir)
	parent, err := realPath(filepath.Dir(clean))
	if err != nil {
		return "", fmt.Errorf("build index: %w", err)
	}
	ap, err := realPath(path)
	if err != nil {
		// The file was read a moment ago; if it has gone since, its path is still the best guess.
		if ap, err = filepath.Abs(path); err != nil {
			return "", fmt.Errorf("build index: %w", err)
		}
	}
	rel, err := filepath.Rel(filepath.Join(parent, filepath.Base(clean)), ap)
	if err != nil {
		return ap, nil
	}
	return rel, nil
}

// realPath returns path made absolute with its links resolved. The working folder is taken from the
// system, not from $PWD (which os.Getwd prefers), since $PWD may name it through a link.
func realPath(path string) (string, error) {
	p, err := filepath.EvalSymlinks(path)
	if err != nil {
		return "", err
	}
	if filepath.IsAbs(p) {
		return p, nil
	}
	wd, err := syscall.Getwd()
	if err != nil {
		return "", err
	}
	return filepath.Join(wd, p), nil
}

// source is one pool file being read: its raw bytes are hashed on the way in, and a stream (stdin,
// a pipe, a device) is also stored in the index folder so kept rows can later be copied from it:
// opening it again would wait forever or read other bytes.
type source struct {
	path       string
	f          *os.File
	store      *os.File
	stored     string // the copy's name in the index, for a stream
	storeShown string // the copy's path once the index is published, for errors
	h          hash.Hash
	size       int64
	comp       jsonl.Compression
	r          io.Reader
	rc         io.Closer
	prog       func(int64)
}

type countingReader struct {
	r    io.Reader
	n    *int64
	prog func(int64)
}

func (c countingReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	*c.n += int64(n)
	if c.prog != nil && n > 0 {
		c.prog(int64(n))
	}
	return n, err
}

// storedName is the name in the index folder of the copy of source si, read from a stream: stdin
// for "-", stdin-N for the source N (from 0) when it is a pipe or another file that is not regular.
func storedName(si int, path string) string {
	if path == "-" {
		return stdinPrefix
	}
	return fmt.Sprintf("%s-%d", stdinPrefix, si)
}

func (b *builder) openSource(ctx context.Context, si int, path string) (*source, error) {
	s := &source{path: path, h: sha256.New(), prog: b.opt.Progress}
	var raw io.Reader
	if h := b.held[si]; h != nil {
		// Detection read the head of this stream: it is read again from memory, then the rest.
		delete(b.held, si)
		s.f, s.stored = h.f, storedName(si, path)
		raw = io.MultiReader(bytes.NewReader(h.head), h.f)
	} else if path == "-" {
		s.f, s.stored = os.Stdin, storedName(si, path)
	} else {
		f, err := os.Open(path)
		if err != nil {
			return nil, pathErr("read", err)
		}
		s.f = f
		fi, err := f.Stat()
		if err != nil {
			s.close()
			return nil, pathErr("read", err)
		}
		if fi.IsDir() {
			s.close()
			return nil, fmt.Errorf("read %s: is a folder, not a JSONL file", path)
		}
		if !fi.Mode().IsRegular() {
			s.stored = storedName(si, path)
		}
	}
	if raw == nil {
		raw = s.f
	}
	if s.stored != "" {
		st, err := os.Create(b.wd.path(s.stored))
		if err != nil {
			s.close()
			return nil, b.wd.err("write", err)
		}
		s.store = st
		s.storeShown = filepath.Join(b.dir, s.stored)
		raw = io.TeeReader(raw, storeWriter{f: st, shown: s.storeShown})
	}
	raw = io.TeeReader(countingReader{r: raw, n: &s.size, prog: s.prog}, s.h)
	r, comp, err := jsonl.NewReader(bufio.NewReaderSize(raw, 1<<20))
	if err != nil {
		s.close()
		return nil, fmt.Errorf("read %s: %w", path, err)
	}
	s.comp = comp
	s.rc = r
	// The scanner reads through ctx: a line with no end (a file of zeros, a stream that never ends)
	// would otherwise keep the reader spinning after a cancellation.
	s.r = jsonl.WithContext(ctx, r)
	return s, nil
}

// storeWriter writes the copy of a stream, wording its errors by the name the copy will have in
// the published index rather than in the working folder.
type storeWriter struct {
	f     *os.File
	shown string
}

func (w storeWriter) Write(p []byte) (int, error) {
	n, err := w.f.Write(p)
	if err != nil {
		err = fmt.Errorf("write %s: %w", w.shown, bareErr(err))
	}
	return n, err
}

func (s *source) close() error {
	if s.rc != nil {
		s.rc.Close()
		s.rc = nil
	}
	if s.f != nil && s.f != os.Stdin {
		s.f.Close()
	}
	s.f = nil
	if s.store != nil {
		err := s.store.Sync()
		if cerr := s.store.Close(); err == nil {
			err = cerr
		}
		s.store = nil
		if err != nil {
			return fmt.Errorf("write %s: %w", s.storeShown, bareErr(err))
		}
	}
	return nil
}

func (s *source) meta() Source {
	return Source{Path: s.path, Stored: s.stored, Size: s.size, SHA256: hex.EncodeToString(s.h.Sum(nil)), Compression: s.comp.String()}
}

// collect receives batch results in any order and writes rows, ids and rejects in input order.
func (b *builder) collect(ctx context.Context, outs <-chan *batchOut) error {
	rowsW, err := b.wd.create(b.wd.path(rowsFile))
	if err != nil {
		return err
	}
	defer rowsW.abort()
	var idsW *fileWriter
	if b.opt.ID != "" {
		if idsW, err = b.wd.create(b.wd.path(idsFile)); err != nil {
			return err
		}
		defer idsW.abort()
	}
	rejW, err := b.wd.create(b.wd.path(rejectedFile))
	if err != nil {
		return err
	}
	defer rejW.abort()
	var contamW *fileWriter
	if b.eval != nil {
		if contamW, err = b.wd.create(b.wd.path(contamFile)); err != nil {
			return err
		}
		defer contamW.abort()
	}

	pending := map[int]*batchOut{}
	next := 0
	var rec [rowRecSize]byte
	var vbuf [binary.MaxVarintLen64]byte
	srcRows := map[int]int64{}
	enc := json.NewEncoder(rejW.w)
	for o := range outs {
		if o.err != nil {
			return o.err
		}
		pending[o.seq] = o
		for {
			o, ok := pending[next]
			if !ok {
				break
			}
			delete(pending, next)
			b.base = append(b.base, b.meta.Rows)
			for i := range o.rows {
				o.rows[i].put(rec[:])
				if _, err := rowsW.w.Write(rec[:]); err != nil {
					return rowsW.fail(err)
				}
				b.meta.TotalLen += int64(o.rows[i].alen)
				b.meta.TextBytes += int64(o.rows[i].textBytes)
			}
			if idsW != nil {
				for _, id := range o.ids {
					b.idHashes = append(b.idHashes, hashID(id))
					n := binary.PutUvarint(vbuf[:], uint64(len(id)))
					idsW.w.Write(vbuf[:n])
					if _, err := idsW.w.Write(id); err != nil {
						return idsW.fail(err)
					}
				}
			}
			for i := range o.rejects {
				if err := enc.Encode(&o.rejects[i]); err != nil {
					return rejW.fail(err)
				}
			}
			if b.firstReject == nil && len(o.rejects) > 0 {
				b.firstReject = &o.rejects[0]
			}
			if len(o.rejects) > 0 || o.missing != nil {
				for len(b.quarantined) <= o.src {
					b.quarantined = append(b.quarantined, SourceQuarantine{})
				}
				q := &b.quarantined[o.src]
				if q.First == nil && len(o.rejects) > 0 {
					q.First = &o.rejects[0]
				}
				q.Rows += int64(len(o.rejects))
				if o.missing != nil {
					q.addMissing(o.missing)
				}
			}
			if b.dups != nil {
				if err := b.addDups(o); err != nil {
					return err
				}
			}
			if contamW != nil {
				if err := b.addContam(o, b.meta.Rows, contamW); err != nil {
					return err
				}
			}
			n := int64(len(o.rows))
			b.meta.Rows += n
			srcRows[o.src] += n
			b.meta.RowsRejected += int64(len(o.rejects))
			b.meta.BlankLines += o.blank
			next++
		}
		if err := ctx.Err(); err != nil {
			return err
		}
	}
	if len(pending) != 0 {
		return errors.New("build index: internal error: batches missing")
	}
	b.meta.RowsRead = b.meta.Rows + b.meta.RowsRejected
	if b.meta.Rows > 0 {
		b.meta.AvgLen = float64(b.meta.TotalLen) / float64(b.meta.Rows)
	}
	for _, w := range []*fileWriter{rowsW, idsW, rejW, contamW} {
		if w == nil {
			continue
		}
		if err := w.close(); err != nil {
			return err
		}
	}
	b.srcRows = srcRows
	for i := range b.quarantined {
		b.quarantined[i].finishMissing()
	}
	return nil
}

// termState is what a worker keeps of one term, together so that a posting touches one place.
type termState struct {
	post  []byte // postings: uvarint key delta, uvarint tf
	last  uint64 // key of the last posting
	df    uint32
	count int32 // occurrences in the row being analysed
}

// worker analyses batches into an in-memory inverted index of its own, spilling sorted runs when its
// share of Options.Mem is used.
type worker struct {
	free     func(*batch) // hands a finished batch back to the reader
	gen      uint64       // generation of dict, from 1; bumped at each spill
	id       int
	an       *analysis.Analyzer
	ex       *jsonl.Extractor
	dict     *termTable
	terms    []string    // by id
	st       []termState // by id
	touched  []int32
	mem      int64
	memLimit func() int64 // the worker's share of Options.Mem, which shrinks as duplicates are found
	wd       workDir      // runs go in its runs folder
	runs     []runFile
	memRun   *memRun // the last dictionary, sorted, once the worker is done
	strict   bool
	dry      bool
	needIDs  bool
	idField  string
	tokField string
	tok      *tokens.Tokenizer // counts the tokens of each row's text fields; nil to take tokField
	cut      []byte            // text with long runs cut, see cutLongRuns
	sign     *signRow          // hashes rows for duplicates; nil without
	eval     *decontam.Set     // checks rows against evaluation files; nil without
	words    []string          // the row's words, for eval
	// text is the row's text parts as extracted (before long runs are cut), a newline between
	// parts: what a pick reads back, and what sign and eval take. Gathered only for them.
	text  []byte
	parts int
}

func (w *worker) work(ctx context.Context, in <-chan *batch, out chan<- *batchOut, paths []string) error {
	for bt := range in {
		o, err := w.do(bt, paths)
		w.free(bt)
		if err != nil {
			return err
		}
		select {
		case out <- o:
		case <-ctx.Done():
			return ctx.Err()
		}
		if !w.dry && w.dictBytes() >= w.memLimit() {
			if err := w.spill(); err != nil {
				return err
			}
		}
	}
	return nil
}

// midBatchSpill is the least a worker's dictionary holds before it spills in the middle of a batch.
// Past its share of Options.Mem a worker spills at the end of each batch; a batch of many distinct
// terms can add far more than a share, so it also spills between rows, but not below this, so that
// a tiny share does not make a run of every row.
const midBatchSpill = 1 << 20

// dictBytes is the memory the worker's dictionary holds: term bytes and postings, the arrays by
// their capacity, and the hash table.
func (w *worker) dictBytes() int64 {
	return w.mem + int64(cap(w.terms))*int64(unsafe.Sizeof("")) + int64(cap(w.st))*int64(unsafe.Sizeof(termState{})) + w.dict.bytes()
}

// do analyses one batch. Postings go into the worker's own dictionary; row records, ids and
// rejects go back to the collector, which alone knows global row numbers.
func (w *worker) do(bt *batch, paths []string) (*batchOut, error) {
	o := &batchOut{seq: bt.seq, src: bt.src}
	if w.sign != nil {
		// At most a row a line: made once, not grown row by row.
		o.keys = make([]dedup.Key, 0, len(bt.lines))
		o.signed = make([]bool, 0, len(bt.lines))
		o.sigs = make([]uint32, 0, len(bt.lines)*w.sign.k)
	}
	file := paths[bt.src]
	local := uint64(0)
	for _, l := range bt.lines {
		line := bt.buf[l.start:l.end]
		reject := func(reason string, cause error) error {
			reason = cutReason(reason, MaxReasonBytes)
			if w.strict {
				return &RowError{File: file, Line: l.line, Offset: l.off, Reason: reason, Err: cause}
			}
			o.rejects = append(o.rejects, newReject(file, l.line, l.off, l.n, reason, line))
			return nil
		}
		if l.tooLong {
			if err := reject(fmt.Sprintf("row longer than --max-row-bytes (%d bytes)", l.n), errTooLong); err != nil {
				return nil, err
			}
			continue
		}
		if isBlank(line) {
			o.blank++
			continue
		}
		if l.line > int64(^uint32(0)) {
			return nil, fmt.Errorf("read %s:%d: more than %d lines in one file", file, l.line, ^uint32(0))
		}
		key := uint64(bt.seq)<<localBits | local
		alen := 0
		w.touched = w.touched[:0]
		ntok := 0
		w.text, w.parts = w.text[:0], 0
		needText := w.sign != nil || w.eval != nil
		row, err := w.ex.Extract(line, func(part []byte) {
			if w.tok != nil {
				ntok += w.tok.Count(part)
			}
			if needText {
				// Before long runs are cut: a pick reads the text as it stands.
				if w.parts > 0 {
					w.text = append(w.text, '\n')
				}
				w.text = append(w.text, part...)
				w.parts++
			}
			part, w.cut = cutLongRuns(part, w.cut)
			w.an.EachTagged(part, func(term []byte, tag *uint64) {
				if len(term) > MaxTermBytes {
					return
				}
				alen++
				if w.dry {
					return
				}
				// Frequent terms carry their id in the analyzer's tag, stamped with the dictionary's
				// generation so that ids from before a spill are not taken for current ones.
				if g := *tag; g>>32 == w.gen {
					id := int32(uint32(g))
					if w.st[id].count == 0 {
						w.touched = append(w.touched, id)
					}
					w.st[id].count++
					return
				}
				id := w.dict.lookup(term, w.terms, func() int32 {
					id := int32(len(w.terms))
					t := string(term)
					w.terms = append(w.terms, t)
					w.st = append(w.st, termState{})
					// Go allocates a string's bytes in size classes of 16 bytes or so.
					w.mem += int64(len(t)+15) &^ 15
					return id
				})
				*tag = w.gen<<32 | uint64(uint32(id))
				if w.st[id].count == 0 {
					w.touched = append(w.touched, id)
				}
				w.st[id].count++
			})
		})
		if len(row.Missing) > 0 {
			o.noteMissing(row.Missing, l.line, w.ex)
		}
		if err != nil {
			for _, id := range w.touched {
				w.st[id].count = 0
			}
			reason := reasonOf(err)
			if l.n == len(line) && errors.Is(err, jsonl.ErrNotJSON) {
				// Only the last line of a file can lack its newline.
				reason = cutReason(reason, MaxReasonBytes-len(cutShort)) + cutShort
			}
			if err := reject(reason, err); err != nil {
				return nil, err
			}
			continue
		}
		if w.needIDs && !row.HasID {
			for _, id := range w.touched {
				w.st[id].count = 0
			}
			if err := reject(fmt.Sprintf("no id in field %q", w.idField), jsonl.ErrBadID); err != nil {
				return nil, err
			}
			continue
		}
		if row.HasTokens && row.Tokens >= int64(noTokens) {
			for _, id := range w.touched {
				w.st[id].count = 0
			}
			reason := fmt.Sprintf("token count %d in field %q is too large: the limit is %d", row.Tokens, w.tokField, noTokens-1)
			if err := reject(reason, jsonl.ErrBadTokens); err != nil {
				return nil, err
			}
			continue
		}
		for _, id := range w.touched {
			ts := &w.st[id]
			// Appending the varints byte by byte beats copying a few bytes from a buffer.
			before := cap(ts.post)
			ts.post = binary.AppendUvarint(binary.AppendUvarint(ts.post, key-ts.last), uint64(ts.count))
			w.mem += int64(cap(ts.post) - before)
			ts.last = key
			ts.df++
			ts.count = 0
		}
		rec := rowRec{off: uint64(l.off), n: uint32(l.n), line: uint32(l.line), src: uint32(bt.src), alen: uint32(alen), textBytes: uint32(min(row.TextBytes, int(^uint32(0)))), tokens: noTokens}
		if row.HasTokens {
			rec.tokens = uint32(row.Tokens)
		}
		if w.tok != nil {
			rec.tokens = uint32(min(ntok, int(noTokens)-1))
		}
		// The crc covers the line as copied, newline included, so a copy can be checked.
		rec.crc = crcLine(line, l.n)
		o.rows = append(o.rows, rec)
		if w.needIDs {
			o.ids = append(o.ids, append([]byte(nil), row.ID...))
		}
		if w.sign != nil {
			w.sign.sum(o, w.text)
		}
		if w.eval != nil {
			w.checkEval(o, len(o.rows)-1, w.text)
		}
		local++
		if !w.dry && w.dictBytes() >= max(w.memLimit(), midBatchSpill) {
			if err := w.spill(); err != nil {
				return nil, err
			}
		}
	}
	return o, nil
}

// crcLine is the CRC-32C of a line as it stands in the source: its bytes and, when n says the line
// ended with one, the newline.
func crcLine(line []byte, n int) uint32 {
	c := crc32.Update(0, castagnoli, line)
	if n > len(line) {
		c = crc32.Update(c, castagnoli, []byte{'\n'})
	}
	return c
}

// utf8BOM is the UTF-8 byte-order mark, which some writers put at the start of a file.
var utf8BOM = []byte("\xef\xbb\xbf")

func isBlank(b []byte) bool {
	for _, c := range b {
		switch c {
		case ' ', '\t', '\r', '\n':
		default:
			return false
		}
	}
	return true
}

// MaxReasonBytes bounds the reason a bad row is given, in the quarantine and in a --strict error:
// a reason may quote the row's values and fields, and a hostile row must not make it long.
const MaxReasonBytes = 300

// reasonOf words a row error for the quarantine; jsonl's errors already say kind, field and detail.
func reasonOf(err error) string {
	return cutReason(err.Error(), MaxReasonBytes)
}

// cutReason cuts s to at most n bytes, at a character, marking the cut.
func cutReason(s string, n int) string {
	if len(s) <= n {
		return s
	}
	const more = " …"
	n -= len(more)
	for n > 0 && !utf8.RuneStart(s[n]) {
		n--
	}
	return s[:n] + more
}

// cutShort is added to the reason of a malformed last line without a newline.
const cutShort = "; it is the last line and has no newline: the file may have been cut short"

// quoteRaw keeps the bytes of a bad row, at most MaxRawBytes of them, in a form JSON can carry:
// valid UTF-8 stays readable, anything else is escaped as in a Go string literal and escaped is
// true. A cut never splits a UTF-8 sequence, so a cut alone does not force escaping.
func quoteRaw(b []byte) (raw string, escaped bool) {
	if len(b) > MaxRawBytes {
		b = b[:MaxRawBytes]
		i := len(b) - 1
		for i > 0 && len(b)-i < utf8.UTFMax && !utf8.RuneStart(b[i]) {
			i--
		}
		if !utf8.FullRune(b[i:]) {
			b = b[:i]
		}
	}
	if utf8.Valid(b) {
		return string(b), false
	}
	q := strconv.Quote(string(b))
	return q[1 : len(q)-1], true
}

// FileSHA256 is the SHA-256 of a file, in hex: how indexes and runs name the exact files they read
// (a tokenizer, a target, vectors).
func FileSHA256(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", fmt.Errorf("read %s: %w", path, err)
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

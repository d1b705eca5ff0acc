package run

import (
	"bufio"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"sync"

	"sluice/budget"
	"sluice/index"
	"sluice/index/atomicdir"
	selection "sluice/select"
)

// write writes the run folder in a working folder beside it and publishes it when complete.
func (p *picked) write() error {
	opt := p.opt
	if p.tmp == "" {
		var err error
		if p.tmp, err = atomicdir.Temp(opt.Out); err != nil {
			return err
		}
	}
	tmp := p.tmp
	// The kept rows and the scores are nearly all of a run's bytes. Each is written, hashed and
	// synced on a goroutine of its own, so that one's wait for the disk overlaps the other's work.
	outs := []struct {
		name string
		fill func(w *bufio.Writer) error
	}{
		{KeptName(opt.Compress), p.copyKept},
		{ScoresFile, p.writeScores},
		{LedgerFile, func(w *bufio.Writer) error { return writeLedger(w, p.out.Ledger) }},
		{RejectedFile, p.writeRejected},
	}
	sums := make([]string, len(outs))
	errs := make([]error, len(outs))
	var wg sync.WaitGroup
	for i, o := range outs {
		wg.Go(func() {
			sums[i], errs[i] = writeHashed(filepath.Join(tmp, o.name), filepath.Join(opt.Out, o.name), o.fill)
		})
	}
	wg.Wait()
	hashes := map[string]string{}
	for i, o := range outs {
		if errs[i] != nil {
			return errs[i]
		}
		hashes[o.name] = sums[i]
	}
	// A part of the index that failed its check as it was read answered zeros: nothing is published.
	if err := p.ix.Err(); err != nil {
		return err
	}
	if err := writeManifest(tmp, opt.Out, p.manifest(), hashes); err != nil {
		return err
	}
	for _, o := range outs {
		p.out.Files = append(p.out.Files, o.name)
	}
	if p.target != opt.Target {
		p.out.Files = append(p.out.Files, TargetCopy)
	}
	p.out.Files = append(p.out.Files, ManifestFile)
	if err := atomicdir.Publish(tmp, opt.Out); err != nil {
		return err
	}
	p.tmp = ""
	return nil
}

// manifest records the pick for the run folder. The hashes of the index's meta.json and of the
// target file tie the run to its inputs.
func (p *picked) manifest() *Manifest {
	opt := p.opt
	m := &Manifest{Sluice: opt.Version, Command: opt.Command,
		Index: FileRef{Path: opt.Index}, Target: FileRef{Path: opt.Target}, Settings: p.out.Settings}
	m.Index.SHA256, _ = sha256File(filepath.Join(opt.Index, "meta.json"))
	m.Index.Identity, _ = index.Identity(opt.Index)
	for _, in := range opt.inputs() {
		sum, _ := sha256File(in)
		m.Inputs = append(m.Inputs, FileRef{Path: in, SHA256: sum})
	}
	m.Target.SHA256, _ = sha256File(p.target)
	m.Sets = p.out.Sets
	if p.target != opt.Target {
		// Read once from a pipe: the run keeps what was read, and names its own copy.
		m.Target.Path = filepath.Join(opt.Out, TargetCopy)
	}
	return m
}

// copyKept copies the kept rows to w, compressed as asked; decompressed, the bytes are the same,
// or, with a KeptFormat other than KeptRows, the rows in that schema.
func (p *picked) copyKept(w *bufio.Writer) error {
	kept := p.out.Kept
	write := func(w io.Writer) error {
		if f := p.opt.KeptFormat; f != "" && f != KeptRows {
			return p.copyUniform(f, w)
		}
		return p.ix.CopyRows(w, kept)
	}
	return compressed(w, p.opt.Compress, write)
}

// writeFileBytes writes b to path and fsyncs it; errors name it as shown.
func writeFileBytes(path, shown string, b []byte) error {
	_, err := writeHashed(path, shown, func(w *bufio.Writer) error { _, err := w.Write(b); return err })
	return err
}

// writeHashed creates path, lets fill write it through a buffer, then flushes and fsyncs it, and
// returns the SHA-256 of what was written, in hex, so that a manifest need not read the file again.
func writeHashed(path, shown string, fill func(w *bufio.Writer) error) (string, error) {
	h := sha256.New()
	if err := atomicdir.WriteFile(path, fill, h); err != nil {
		return "", fmt.Errorf("write %s: %w", shown, err)
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

// writeScores writes one line per indexed row in input order, in the schema of Score. Scores are
// printed with the fewest digits that read back to the same float64, so the file agrees with
// explanations to the bit. Lines are formatted a batch of rows at a time on every core and written
// in order.
func (p *picked) writeScores(w *bufio.Writer) error {
	f := p.scoreFormat()
	n := len(p.dec)
	size := scoreBatch
	if p.opt.scoreBatch > 0 {
		size = p.opt.scoreBatch
	}
	nw := max(1, min(runtime.GOMAXPROCS(0), (n+size-1)/size))
	type batch struct {
		lo  int
		out chan []byte
	}
	jobs := make(chan batch, 2*nw)
	order := make(chan chan []byte, 2*nw)
	free := make(chan []byte, 3*nw)
	var wg sync.WaitGroup
	for range nw {
		wg.Go(func() {
			reasons := map[selection.Reason][]byte{}
			for j := range jobs {
				var b []byte
				select {
				case b = <-free:
				default:
				}
				for r := j.lo; r < min(n, j.lo+size); r++ {
					b = p.appendScoreLine(b, r, f, reasons)
				}
				j.out <- b
			}
		})
	}
	go func() {
		defer close(order)
		defer close(jobs)
		for lo := 0; lo < n; lo += size {
			j := batch{lo, make(chan []byte, 1)}
			jobs <- j
			order <- j.out
		}
	}()
	var err error
	done := 0
	for out := range order {
		b := <-out
		if err == nil {
			_, err = w.Write(b)
		}
		// The lines ask each row's record, cluster and id in row order: their pages go behind.
		if done += size; done%(16*size) == 0 {
			p.ix.ReleaseRows(done-16*size, done)
		}
		select {
		case free <- b[:0]:
		default:
		}
	}
	wg.Wait()
	return err
}

// scoreBatch is how many rows' lines of scores.jsonl one goroutine formats at a time.
const scoreBatch = 4096

// scoreFormat is what every line of scores.jsonl draws on, quoted once: the target ids and set
// names, and which bytes stand in a JSON string as they are.
type scoreFormat struct {
	targets, sets [][]byte
	plain         [256]bool
}

func (p *picked) scoreFormat() *scoreFormat {
	f := &scoreFormat{targets: make([][]byte, len(p.targets))}
	for i, t := range p.targets {
		f.targets[i] = AppendJSONString(nil, t.ID)
	}
	for _, s := range p.sets {
		f.sets = append(f.sets, AppendJSONString(nil, s.ref.Name))
	}
	for c := range f.plain {
		f.plain[c] = jsonPlain([]byte{byte(c)})
	}
	return f
}

// appendScoreLine appends row r's line of scores.jsonl; reasons holds the reasons quoted so far.
func (p *picked) appendScoreLine(b []byte, r int, f *scoreFormat, reasons map[selection.Reason][]byte) []byte {
	d := &p.dec[r]
	b = append(b, `{"id":`...)
	b = appendJSONID(b, p.ix, r, &f.plain, false)
	b = append(b, `,"score":`...)
	if s := p.scores[r]; math.IsNaN(s) {
		b = append(b, "null"...) // a barred row the method did not score
	} else {
		b = strconv.AppendFloat(b, s, 'g', -1, 64)
	}
	b = append(b, `,"rank":`...)
	b = strconv.AppendInt(b, int64(d.Rank), 10)
	b = append(b, `,"kept":`...)
	b = strconv.AppendBool(b, d.Kept)
	if !d.Kept {
		q, ok := reasons[d.Reason]
		if !ok {
			q = AppendJSONString(nil, d.Reason.String())
			reasons[d.Reason] = q
		}
		b = append(b, `,"reason":`...)
		b = append(b, q...)
		b = p.appendGuard(b, r, d.Reason, &f.plain)
	}
	b = append(b, `,"tokens":`...)
	b = strconv.AppendInt(b, p.tokens(r), 10)
	b = append(b, `,"target":`...)
	if p.best == nil {
		b = append(b, "null"...) // not asked for (--attribute=false), or not a lexical method
	} else if t := p.best[r]; t >= 0 {
		b = append(b, f.targets[t]...)
	} else {
		b = append(b, "null"...)
	}
	if p.rowSet != nil {
		b = append(b, `,"set":`...)
		b = append(b, f.sets[p.rowSet[r]]...)
	}
	b = append(b, `,"ledger":`...)
	b = strconv.AppendFloat(b, d.LedgerAfter, 'g', -1, 64)
	return append(b, "}\n"...)
}

// appendJSONID appends the id of row r of ix as a JSON string, quoting it in place when all its
// bytes are plain, as ids nearly always are; read alone (index.AppendRowIDRead) when rows come at
// random.
func appendJSONID(b []byte, ix *index.Index, r int, plain *[256]bool, random bool) []byte {
	start := len(b)
	b = append(b, '"')
	if random {
		b = ix.AppendRowIDRead(b, r)
	} else {
		b = ix.AppendRowID(b, r)
	}
	for _, c := range b[start+1:] {
		if !plain[c] {
			id := string(b[start+1:])
			return AppendJSONString(b[:start], id)
		}
	}
	return append(b, '"')
}

// jsonPlain reports whether s can stand in a JSON string as it is, as encoding/json would write it.
func jsonPlain[T string | []byte](s T) bool {
	for i := 0; i < len(s); i++ {
		if c := s[i]; c < 0x20 || c >= 0x7f || c == '"' || c == '\\' || c == '<' || c == '>' || c == '&' {
			return false
		}
	}
	return true
}

// AppendJSONString appends s as a JSON string, byte for byte as encoding/json writes it. Ids are
// nearly always plain ASCII, which is copied as it is; anything else goes through encoding/json.
func AppendJSONString(b []byte, s string) []byte {
	if !jsonPlain(s) {
		q, _ := json.Marshal(s)
		return append(b, q...)
	}
	b = append(b, '"')
	b = append(b, s...)
	return append(b, '"')
}

// appendGuard appends what a guard found of row r: the row kept instead of a duplicate, or the
// evaluation row and n-gram a contaminated row shares.
func (p *picked) appendGuard(b []byte, r int, why selection.Reason, plain *[256]bool) []byte {
	switch why {
	case selection.Duplicate:
		b = append(b, `,"duplicate_of":`...)
		if p.dupIDs != nil {
			return AppendJSONString(b, p.dupIDs[r])
		}
		return appendJSONID(b, p.ix, p.dupOf(r), plain, true)
	case selection.Contaminated:
		hit := p.guards.contam[r]
		b = append(b, `,"contaminated":`...)
		b = AppendJSONString(b, fmt.Sprintf("%s:%d", p.guards.evalFiles[hit.File], hit.Line))
		b = append(b, `,"ngram":`...)
		return AppendJSONString(b, strings.Join(hit.Words, " "))
	}
	return b
}

// writeLedger writes ledger.json's bytes.
func writeLedger(w *bufio.Writer, l *budget.Ledger) error {
	b, err := json.MarshalIndent(l, "", "  ")
	if err != nil {
		return err
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

// writeRejected writes the quarantined target rows, rejected.jsonl.
func (p *picked) writeRejected(w *bufio.Writer) error {
	enc := json.NewEncoder(w)
	for i := range p.trej {
		if err := enc.Encode(&p.trej[i]); err != nil {
			return err
		}
	}
	return nil
}

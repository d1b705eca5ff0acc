package run

import (
	"context"
	"runtime"
	"sync"

	"sluice/index"
	"sluice/index/decontam"
	"sluice/index/dedup"
)

// rowHashes is what the guards need of one row: its exact-duplicate key, MinHash signature, and
// whether it shares an n-gram with the evaluation set.
type rowHashes struct {
	row          int
	key          dedup.Key
	sig          dedup.Signature
	words        int64 // words checked against the evaluation set
	contaminated bool
	hit          decontam.Hit
}

// hashBatch is a run of rows' texts on their way through the hashers.
type hashBatch struct {
	seq   int
	rows  []int
	ends  []int // text of row i is text[ends[i-1]:ends[i]]
	text  []byte
	out   []rowHashes
	ready chan struct{}
}

// hashBatchRows is how many rows a worker hashes at a time: enough to amortise the hand-over.
const hashBatchRows = 256

// hashPlan says what eachRowHashed does with each row.
type hashPlan struct {
	prm *dedup.Params // sign the rows, and key them but for repeat
	set *decontam.Set // check the rows' words against it
	// repeat, when set, marks the rows whose stored key (index.DupKey) an earlier row has: the
	// stored keys are taken instead of hashing, and the rows marked are not signed (their signature
	// is their first's), nor read at all unless set is.
	repeat []uint64
}

func (h hashPlan) isRepeat(row int) bool {
	return h.repeat != nil && h.repeat[row/64]&(1<<(row%64)) != 0
}

// eachRowHashed reads the rows of the pool again and hashes them on every core (keys and
// signatures when plan.prm is set, n-gram checks when plan.set is), then calls fn with the rows in
// order. It returns the hashing work done.
func eachRowHashed(ctx context.Context, ix *index.Index, plan hashPlan, fn func(*rowHashes) error) (dedup.Work, error) {
	nw := max(1, runtime.GOMAXPROCS(0))
	jobs := make(chan *hashBatch, 2*nw)
	order := make(chan *hashBatch, 4*nw)
	works := make([]dedup.Work, nw)
	errs := make([]error, nw)
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	var wg sync.WaitGroup
	for w := range nw {
		wg.Go(func() { works[w], errs[w] = hashWorker(ctx, jobs, plan) })
	}
	var readErr error
	go func() {
		defer close(order)
		defer close(jobs)
		b := newHashBatch(0)
		flush := func() bool {
			if len(b.rows) == 0 {
				return true
			}
			select {
			case order <- b:
			case <-ctx.Done():
				return false
			}
			select {
			case jobs <- b:
			case <-ctx.Done():
				return false
			}
			b = newHashBatch(b.seq + 1)
			return true
		}
		var rows []int // nil for every row
		if plan.repeat != nil && plan.set == nil {
			rows = make([]int, 0, ix.NumRows())
			for r := range ix.NumRows() {
				if !plan.isRepeat(r) {
					rows = append(rows, r)
				}
			}
		}
		readErr = eachRowText(ctx, ix, rows, func(row int, text []byte) error {
			b.rows = append(b.rows, row)
			b.text = append(b.text, text...)
			b.ends = append(b.ends, len(b.text))
			if len(b.rows) == hashBatchRows && !flush() {
				return ctx.Err()
			}
			return nil
		})
		if readErr == nil {
			flush()
		}
	}()
	var fnErr error
	for b := range order {
		select {
		case <-b.ready:
		case <-ctx.Done():
		}
		if fnErr != nil || ctx.Err() != nil {
			continue // drain, so the reader is not left blocked
		}
		for i := range b.out {
			if fnErr = fn(&b.out[i]); fnErr != nil {
				cancel()
				break
			}
		}
	}
	cancel()
	wg.Wait()
	var total dedup.Work
	for w := range nw {
		if errs[w] != nil && fnErr == nil && readErr == nil {
			return total, errs[w]
		}
		total = total.Plus(works[w])
	}
	if fnErr != nil {
		return total, fnErr
	}
	return total, readErr
}

func newHashBatch(seq int) *hashBatch {
	return &hashBatch{seq: seq, ready: make(chan struct{})}
}

// hashWorker hashes batches until there are none, with hashers of its own.
func hashWorker(ctx context.Context, jobs <-chan *hashBatch, plan hashPlan) (dedup.Work, error) {
	prm, set := plan.prm, plan.set
	var hasher dedup.Hasher
	var signer *dedup.Signer
	if prm != nil {
		var err error
		if signer, err = dedup.NewSigner(*prm); err != nil {
			return dedup.Work{}, err
		}
	}
	var words []string
	for b := range jobs {
		if ctx.Err() != nil {
			close(b.ready)
			continue
		}
		b.out = make([]rowHashes, len(b.rows))
		var sigs []uint32 // one backing array for the batch's signatures, not one per row
		if prm != nil {
			sigs = make([]uint32, len(b.rows)*prm.Hashes)
		}
		start := 0
		for i, row := range b.rows {
			text := b.text[start:b.ends[i]]
			start = b.ends[i]
			h := &b.out[i]
			h.row = row
			if set != nil {
				words = decontam.Words(words[:0], string(text))
				h.words = int64(len(words))
				if hit, ok := set.Check(words); ok {
					hit.Words = append([]string(nil), hit.Words...)
					h.hit, h.contaminated = hit, true
				}
			}
			switch {
			case signer == nil || plan.isRepeat(row):
			case plan.repeat != nil: // the key was read from the index; only the signature is made
				signer.Write(text)
				h.sig = signer.Sum(sigs[i*prm.Hashes : i*prm.Hashes : (i+1)*prm.Hashes])
			default:
				hasher.Write(text)
				h.key = hasher.Sum()
				signer.Write(text)
				h.sig = signer.Sum(sigs[i*prm.Hashes : i*prm.Hashes : (i+1)*prm.Hashes])
			}
		}
		close(b.ready)
	}
	w := hasher.Work()
	if signer != nil {
		w = w.Plus(signer.Work())
	}
	return w, nil
}

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

// eachRowHashed reads every row of the pool again and hashes it on every core (keys and
// signatures when prm is set, n-gram checks when set is), then calls fn with the rows in order.
// It returns the hashing work done.
func eachRowHashed(ctx context.Context, ix *index.Index, prm *dedup.Params, set *decontam.Set, fn func(*rowHashes) error) (dedup.Work, error) {
	nw := max(1, runtime.GOMAXPROCS(0))
	jobs := make(chan *hashBatch, 2*nw)
	order := make(chan *hashBatch, 4*nw)
	works := make([]dedup.Work, nw)
	errs := make([]error, nw)
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	var wg sync.WaitGroup
	for w := range nw {
		wg.Go(func() { works[w], errs[w] = hashWorker(ctx, jobs, prm, set) })
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
		readErr = eachRowText(ctx, ix, nil, func(row int, text []byte) error {
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
func hashWorker(ctx context.Context, jobs <-chan *hashBatch, prm *dedup.Params, set *decontam.Set) (dedup.Work, error) {
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
			if signer != nil {
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

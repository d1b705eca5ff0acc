package main

import (
	"github.com/schollz/progressbar/v3"
)

// progress draws a bar on stderr when it is a terminal and not --quiet, of bytes given a total, of
// rows (rows tells their total) when not; otherwise every method is a no-op, so callers need not check.
type progress struct{ bar *progressbar.ProgressBar }

func newProgress(e *env, quiet bool, total int64, what string) *progress {
	if quiet || !e.tty {
		return &progress{}
	}
	return &progress{bar: progressbar.NewOptions64(total,
		progressbar.OptionSetWriter(e.stderr),
		progressbar.OptionSetDescription(what),
		progressbar.OptionShowBytes(total > 0),
		progressbar.OptionSetWidth(30),
		progressbar.OptionThrottle(100_000_000),
		progressbar.OptionClearOnFinish(),
	)}
}

func (p *progress) add(n int64) {
	if p.bar != nil {
		p.bar.Add64(n)
	}
}

func (p *progress) rows(n, of int) {
	if p.bar != nil {
		p.bar.ChangeMax(of)
		p.bar.Add(n)
	}
}

func (p *progress) done() {
	if p.bar != nil {
		p.bar.Finish()
	}
}

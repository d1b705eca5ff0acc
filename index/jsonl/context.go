package jsonl

import (
	"context"
	"io"
)

// checkEvery is how many bytes a reader from WithContext passes between two looks at its context:
// often enough that a cancelled read of a fast stream stops within a millisecond or so, seldom
// enough to cost nothing.
const checkEvery = 1 << 20

// WithContext returns a reader of r that fails with ctx's error once ctx is done. A Scanner reading
// it stops on a cancellation even in a line that never ends (a file of zeros, say), where it would
// otherwise read and skip for as long as the stream lasts. A read already waiting in r is not cut
// short.
func WithContext(ctx context.Context, r io.Reader) io.Reader {
	return &ctxReader{ctx: ctx, r: r}
}

type ctxReader struct {
	ctx  context.Context
	r    io.Reader
	left int // bytes to pass before the next look at ctx
}

func (c *ctxReader) Read(p []byte) (int, error) {
	if c.left <= 0 {
		if err := c.ctx.Err(); err != nil {
			return 0, err
		}
		c.left = checkEvery
	}
	n, err := c.r.Read(p)
	c.left -= n
	return n, err
}

package dedup

import "errors"

var (
	// ErrParams reports Params that cannot be used.
	ErrParams = errors.New("bad parameters")
	// ErrRow reports a row number that is negative, too large or out of order.
	ErrRow = errors.New("bad row number")
	// ErrLength reports a signature or a list of scores of the wrong length.
	ErrLength = errors.New("wrong length")
)

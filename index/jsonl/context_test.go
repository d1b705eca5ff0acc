package jsonl

import (
	"context"
	"errors"
	"io"
	"strings"
	"testing"
	"time"
)

// TestScannerStopsOnCancel: a stream of zeros has one line that never ends, which the scanner reads
// into its buffer up to the line limit and then skips for as long as the stream lasts. Read through
// WithContext, it must stop with the context's error once the context is cancelled. The deadline
// is generous: it tells "stops" from "never stops", not fast from slow.
func TestScannerStopsOnCancel(t *testing.T) {
	for _, tc := range []struct {
		name    string
		maxLine int
	}{
		{"skipping past a small limit", 1 << 10},
		{"filling up to the default limit", 0},
		{"filling up to a row limit of 64 MiB", 64 << 20},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ctx, cancel := context.WithCancel(context.Background())
			defer cancel()
			time.AfterFunc(100*time.Millisecond, cancel)
			done := make(chan error, 1)
			go func() {
				sc := NewScanner(WithContext(ctx, repeatReader(0)), tc.maxLine)
				for sc.Scan() {
				}
				done <- sc.Err()
			}()
			select {
			case err := <-done:
				if !errors.Is(err, context.Canceled) {
					t.Fatalf("scan of an endless line stopped with %v, want context.Canceled", err)
				}
			case <-time.After(10 * time.Second):
				t.Fatal("scan of an endless line still running 10 s after its context was cancelled")
			}
		})
	}
}

// TestWithContextPassesBytes: until its context is done the reader is r.
func TestWithContextPassesBytes(t *testing.T) {
	in := strings.Repeat("{\"text\":\"a row\"}\n", 200_000) // several checkEvery
	got, err := io.ReadAll(WithContext(context.Background(), strings.NewReader(in)))
	if err != nil || string(got) != in {
		t.Fatalf("read %d bytes of %d, err %v", len(got), len(in), err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if n, err := WithContext(ctx, strings.NewReader(in)).Read(make([]byte, 10)); n != 0 || !errors.Is(err, context.Canceled) {
		t.Errorf("read after cancel: %d bytes, %v", n, err)
	}
}

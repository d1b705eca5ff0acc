// Command sluice picks the rows of a large instruction pool that are most like a target task, as many
// as a FLOP budget allows once the cost of choosing them is paid.
package main

import (
	"context"
	"os"
	"os/signal"
	"runtime/debug"
	"runtime/metrics"
	"syscall"
	"time"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	if os.Getenv("GOGC") == "" {
		go collectTighter(ctx)
	}
	code := dispatch(ctx, os.Args[1:], newEnv())
	stop()
	os.Exit(code)
}

// collectTighter lets the heap reach 1.25× what is live rather than 2× once 64 MiB are live: the
// large arrays hold no pointers, so collecting more often costs little there, and much in a small
// run, whose collections are mostly fixed costs (README, Benchmarks).
func collectTighter(ctx context.Context) {
	live := []metrics.Sample{{Name: "/gc/heap/live:bytes"}}
	for tick := time.NewTicker(20 * time.Millisecond); ctx.Err() == nil; <-tick.C {
		if metrics.Read(live); live[0].Value.Kind() == metrics.KindUint64 && live[0].Value.Uint64() > 64<<20 {
			debug.SetGCPercent(25)
			return
		}
	}
}

// Command sluice picks the rows of a large instruction pool that are most like a target task, as many
// as a FLOP budget allows once the cost of choosing them is paid.
package main

import (
	"context"
	"os"
	"os/signal"
	"runtime/debug"
	"syscall"
)

func main() {
	if os.Getenv("GOGC") == "" { // pointer-free arrays, marked for nothing: a heap of 1.25× live
		debug.SetGCPercent(25) // rather than 2× costs about 1 % more CPU (README, Benchmarks)
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	code := dispatch(ctx, os.Args[1:], newEnv())
	stop()
	os.Exit(code)
}

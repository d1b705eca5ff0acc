// Command sluice picks the rows of a large instruction pool that are most like a target task, as many
// as a FLOP budget allows once the cost of choosing them is paid.
package main

import (
	"context"
	"os"
	"os/signal"
	"syscall"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	code := dispatch(ctx, os.Args[1:], newEnv())
	stop()
	os.Exit(code)
}

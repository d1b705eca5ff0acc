package main

import (
	"context"
	"errors"
	"fmt"
	"strings"

	"github.com/spf13/pflag"

	"sluice/select/run"
)

type shardCmd struct{}

func (*shardCmd) name() string { return "shard" }
func (*shardCmd) summary() string {
	return "pick over an index set in steps, a machine per segment: score, dups, cut, write, join"
}

func (*shardCmd) flags() *pflag.FlagSet {
	fs := newFlags("shard")
	fs.String("work", "", "folder the steps share, seen by every machine (required)")
	fs.Int("shard", -1, "score, dups, write: the segment (dups: the part of the keys) this step takes, from 0")
	return addPickFlags(fs)
}

func (c *shardCmd) run(ctx context.Context, e *env, fs *pflag.FlagSet) error {
	if err := required(noArgs(fs, "a step ("+strings.Join(run.ShardSteps(), ", ")+")"), unset(fs, "work")); err != nil {
		return err
	}
	opt, err := pickOptions(fs, false)
	if err != nil {
		return err
	}
	opt.Command, opt.Version = append([]string{"sluice"}, e.args...), version()
	shard, _ := fs.GetInt("shard")
	rep, err := run.ShardStep(ctx, fs.Args(), opt, fs.Lookup("work").Value.String(), shard)
	if errors.Is(err, run.ErrShard) || errors.Is(err, run.ErrMemory) {
		return usagef("%v", err)
	}
	if quiet, _ := fs.GetBool("quiet"); err == nil && !quiet {
		fmt.Fprintln(e.stdout, rep)
	}
	return err
}

package main

import (
	"github.com/spf13/pflag"

	"sluice/select/run"
)

// addMovedFlags declares the flags that say where a run's inputs are when they have moved.
func addMovedFlags(fs *pflag.FlagSet) {
	fs.String("index", "", "the run's index folder, if not where the run's manifest says")
	fs.String("target", "", "the run's target file, if not where the run's manifest says")
}

func movedFrom(fs *pflag.FlagSet) run.Inputs {
	var in run.Inputs
	in.Index, _ = fs.GetString("index")
	in.Target, _ = fs.GetString("target")
	return in
}

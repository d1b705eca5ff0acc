package main

import (
	"github.com/spf13/pflag"

	"sluice/select/run"
)

// addMovedFlags declares the flags that say where a run's inputs are when they have moved.
func addMovedFlags(fs *pflag.FlagSet) {
	fs.String("index", "", "the run's index folder, if not where the run's manifest says")
	fs.StringArray("target", nil, "the run's target file, if not where the run's manifest says (several: repeat it, in the run's order)")
}

func movedFrom(fs *pflag.FlagSet) run.Inputs {
	var in run.Inputs
	in.Index, _ = fs.GetString("index")
	if ts, _ := fs.GetStringArray("target"); len(ts) > 0 {
		in.Target, in.MoreTargets = ts[0], ts[1:]
	}
	return in
}

package main

import (
	"fmt"
	"os"

	"sluice/budget"
)

// Temporary shims for plan.go while it moves into budget/plan; removed once it no longer calls them.
func fmtFLOPs(v float64) string { return budget.FormatFLOPs(v) }
func fmtCount(v float64) string { return budget.FormatCount(v) }

func writeFileBytes(path string, b []byte) error {
	f, err := os.Create(path)
	if err != nil {
		return fmt.Errorf("write %w", err)
	}
	_, err = f.Write(b)
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	return nil
}

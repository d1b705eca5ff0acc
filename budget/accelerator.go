package budget

import (
	"fmt"
	"sort"
	"strings"
)

// Accelerator is a named GPU or accelerator's peak dense throughput, for budgets given in hours.
type Accelerator struct {
	Name      string
	PeakFLOPs float64 // per device, per second, dense (no structured sparsity)
	Precision string  // the number format the peak is for
}

// accelerators are vendors' data-sheet peaks for dense tensor math without sparsity, recalled from
// memory and rounded as the sheets round them; check yours. Training reaches a fraction of peak
// (the MFU), which the caller gives apart.
func accelerators() []Accelerator {
	return []Accelerator{
		{"a100", 312e12, "BF16"},
		{"h100-sxm", 989e12, "BF16"},
		{"h100-pcie", 756e12, "BF16"},
		{"h200", 989e12, "BF16"},
		{"l40s", 362e12, "BF16"},
		{"mi250x", 383e12, "BF16"},
		{"mi300x", 1307e12, "BF16"},
		{"v100", 125e12, "FP16"},
	}
}

// Accelerators lists the named accelerators, by name.
func Accelerators() []Accelerator {
	a := accelerators()
	sort.Slice(a, func(i, j int) bool { return a[i].Name < a[j].Name })
	return a
}

// LookupAccelerator finds an accelerator by name, ignoring case.
func LookupAccelerator(name string) (Accelerator, error) {
	var names []string
	for _, a := range Accelerators() {
		if strings.EqualFold(a.Name, name) {
			return a, nil
		}
		names = append(names, a.Name)
	}
	return Accelerator{}, fmt.Errorf("no accelerator named %q: give one of %s, or its peak FLOP/s as a number: %w", name, strings.Join(names, ", "), ErrBadNumber)
}

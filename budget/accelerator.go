package budget

import (
	"errors"
	"fmt"
	"math"
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

// GPUTime is a budget given as time on accelerators: GPU-hours in total over all GPUs, or GPUs
// running for Hours of wall-clock time, at a peak Rate per GPU (a FLOP/s figure such as "989T",
// or an accelerator's name) and the fraction of it training reaches (MFU).
type GPUTime struct {
	GPUHours float64
	GPUs     int
	Hours    float64
	Rate     string
	MFU      float64
}

// FLOPs works out the budget and says how it was given, for the ledger.
func (g GPUTime) FLOPs() (float64, string, error) {
	hours, how := g.GPUHours, fmt.Sprintf("%g GPU-hours", g.GPUHours)
	if g.GPUs != 0 || g.Hours != 0 {
		if g.GPUs < 1 || g.GPUs > 1_000_000 || !positive(g.Hours) {
			return 0, "", fmt.Errorf("gpu time: %d GPUs for %v hours: give 1 to 1000000 GPUs and hours above 0: %w", g.GPUs, g.Hours, ErrBadNumber)
		}
		hours, how = float64(g.GPUs)*g.Hours, fmt.Sprintf("%d GPUs x %g hours", g.GPUs, g.Hours)
	}
	peak, rate, err := ParseRate(g.Rate)
	if err != nil {
		return 0, "", err
	}
	v, err := FromGPUHours(hours, peak, g.MFU)
	if err != nil {
		return 0, "", err
	}
	return v, fmt.Sprintf("%s x %s x MFU %g", how, rate, g.MFU), nil
}

// ParseRate reads a GPU's peak rate, or the name of an accelerator whose data-sheet peak is taken.
func ParseRate(s string) (float64, string, error) {
	peak, perr := ParseFLOPs(s)
	if perr == nil {
		return peak, s + " FLOP/s", nil
	}
	a, err := LookupAccelerator(s)
	if err != nil {
		var names []string
		for _, a := range Accelerators() {
			names = append(names, a.Name)
		}
		return 0, "", fmt.Errorf("%w; or name an accelerator: %s", perr, strings.Join(names, ", "))
	}
	return a.PeakFLOPs, fmt.Sprintf("%s (%s peak %s FLOP/s, data sheet)", a.Name, a.Precision, FormatFLOPs(a.PeakFLOPs)), nil
}

// CheckGiven refuses GPU time given incompletely or twice over, in the words of sluice's flags
// (--gpu-hours, --gpus, --hours, --gpu-flops, --mfu); given reports whether a flag was given at
// all, so that --mfu 0 is a bad MFU rather than a missing one.
func (g GPUTime) CheckGiven(given func(flag string) bool) error {
	switch {
	case given("gpu-hours") && (given("gpus") || given("hours")):
		return errors.New("give --gpu-hours (in total) or --gpus with --hours (wall-clock), not both")
	case given("gpus") != given("hours"):
		return errors.New("--gpus and --hours go together: the wall-clock hours on that many GPUs")
	case !given("gpu-hours") && !given("gpus"):
		return errors.New("GPU time needs --gpu-hours, or --gpus with --hours")
	case !given("gpu-flops") || !given("mfu"):
		return errors.New("GPU time needs --gpu-flops and --mfu too (there are no defaults for them)")
	case !(g.MFU > 0 && g.MFU <= 1):
		return fmt.Errorf("--mfu %v: must be a fraction above 0 and at most 1", g.MFU)
	case given("gpu-hours") && !(g.GPUHours > 0 && !math.IsInf(g.GPUHours, 0)):
		return fmt.Errorf("--gpu-hours %v: must be a finite number above 0", g.GPUHours)
	}
	return nil
}

package budget

import (
	"fmt"
	"math"
)

// Lexical selection work is counted in FLOP-equivalents so that it can share
// one budget with training. These figures are sluice's stated conventions,
// estimates of the arithmetic done per unit of work, not measurements of any
// machine; they are exported so that reports can show them.
const (
	// FLOPsPerPosting covers reading one posting, computing its term-frequency
	// weight and multiply-adding it into a row's score accumulator.
	FLOPsPerPosting = 4

	// FLOPsPerToken covers analysing one token of text: hashing it and
	// comparing it against the vocabulary.
	FLOPsPerToken = 8
)

// The cost functions below take counts as float64 and do not validate them:
// they are formulas, and callers validate user input with the parsers.
//
// TrainFLOPs, ForwardFLOPs, ForwardBackwardFLOPs and SelectorFLOPs all
// multiply params by tokens first, so that the identities between them
// (ForwardBackwardFLOPs(n, d) == TrainFLOPs(n, d, 1) == SelectorFLOPs(3, n, d))
// hold exactly in floating point, not only up to rounding.

// TrainFLOPs is the cost of training a dense model of params parameters on
// tokens tokens for epochs passes: 6·N·D·E. The factor 6 (2 for the forward
// pass, 4 for the backward pass) is common practice; the model-FLOPs count of
// Narayanan et al., "Efficient Large-Scale Language Model Training on GPU
// Clusters Using Megatron-LM" (SC '21), without activation recomputation,
// reduces to it when the sequence length is small against the hidden size
// (recalled from memory). Attention over the context is not counted.
func TrainFLOPs(params, tokens, epochs float64) float64 {
	return 6 * (params * tokens) * epochs
}

// ForwardFLOPs is the cost of one forward pass of a dense model of params
// parameters over tokens tokens: 2·N·D, one multiply and one add per
// parameter per token (common practice).
func ForwardFLOPs(params, tokens float64) float64 {
	return 2 * (params * tokens)
}

// ForwardBackwardFLOPs is the cost of a forward and a backward pass, taking
// the backward pass as about twice the forward pass (common practice):
// 3·ForwardFLOPs.
func ForwardBackwardFLOPs(params, tokens float64) float64 {
	return 3 * ForwardFLOPs(params, tokens)
}

// SelectorFLOPs is the cost of a model-based selector that runs passes
// forward-pass equivalents of a params-parameter model over tokens tokens:
// passes·2·N·D. A selector that needs a forward and backward pass per row
// (gradient-based scoring) uses passes = 3.
func SelectorFLOPs(passes, params, tokens float64) float64 {
	return passes * ForwardFLOPs(params, tokens)
}

// FromGPUHours converts a compute allowance given in accelerator hours to
// FLOPs: hours·3600·peak·mfu, where peakFLOPsPerGPU is the per-device peak
// rate in FLOP/s for the precision trained in and mfu the model-FLOPs
// utilisation actually reached, a fraction in (0, 1].
func FromGPUHours(hours, peakFLOPsPerGPU, mfu float64) (float64, error) {
	if !positive(hours) {
		return 0, fmt.Errorf("gpu hours: hours = %v: must be finite and greater than zero: %w", hours, ErrBadNumber)
	}
	if !positive(peakFLOPsPerGPU) {
		return 0, fmt.Errorf("gpu hours: peak FLOP/s = %v: must be finite and greater than zero: %w", peakFLOPsPerGPU, ErrBadNumber)
	}
	if !positive(mfu) || mfu > 1 {
		return 0, fmt.Errorf("gpu hours: mfu = %v: must be in (0, 1]: %w", mfu, ErrBadNumber)
	}
	v := hours * 3600 * peakFLOPsPerGPU * mfu
	if math.IsInf(v, 0) {
		return 0, fmt.Errorf("gpu hours: %v h × %v FLOP/s × %v: overflows: %w", hours, peakFLOPsPerGPU, mfu, ErrBadNumber)
	}
	return v, nil
}

func positive(v float64) bool { return v > 0 && !math.IsInf(v, 1) }

// EstimateTokens estimates the number of model tokens in a text of textBytes
// UTF-8 bytes as ceil(textBytes/4), the rule of thumb of about four bytes per
// token for English text with common subword tokenizers (common practice).
// Non-empty text has at least one token; zero or negative lengths give 0.
func EstimateTokens(textBytes int) int {
	if textBytes <= 0 {
		return 0
	}
	n := textBytes / 4
	if textBytes%4 != 0 {
		n++
	}
	return n
}

// Package pilots makes the training subsets of pilot fine-tunes: each method scores the pool once and its ranking is cut at a ladder of token sizes, each subset a prefix of the next, with a pilots file that the plan reads once the metrics are filled in.
package pilots

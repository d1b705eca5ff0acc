// Package decontam finds pool rows that share a word n-gram with an evaluation set, so that rows
// overlapping a benchmark can be left out of training data.
package decontam

// Package index turns JSONL pools into sluice's persistent inverted index on disk and reads it back:
// rows and their sources, the analyzer, the lexicon, postings and pool statistics.
package index

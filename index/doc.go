// Package index turns JSONL pools into sluice's persistent inverted index on disk and reads it back:
// rows and their sources, the analyzer, the lexicon, postings and pool statistics, each part checked
// against its checksum the first time it is read.
//
// A term longer than MaxTermBytes (256 bytes) is dropped, not cut: it is in neither the lexicon nor
// its row's analysed length, and ReadTargets drops it from target rows too. A pool read from a
// stream (stdin, a pipe, a device) is copied into the index, since it cannot be read again to copy
// rows. A pool given by a relative path is found later by a path relative to the index folder,
// taken with links resolved.
package index

// Package run owns a run folder, the output of a pick: its layout and file formats, writing it
// atomically, reading it back as a stream, verifying it, and the pipeline that makes it.
//
// A run folder holds the kept rows byte for byte (kept.jsonl, or .gz/.zst), scores.jsonl (one line
// per indexed row, in input order), ledger.json, rejected.jsonl (target rows that could not be read)
// and manifest.json (settings, inputs' hashes and every other file's hash). Every schema is defined
// here and nowhere else.
package run

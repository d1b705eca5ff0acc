// Package jsonl streams JSONL rows from plain, gzip or zstd input and pulls the text, id and token-count fields out of each row.
package jsonl

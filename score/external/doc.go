// Package external reads per-row scores computed outside sluice, from JSONL or CSV, and joins them to pool rows by id or by row number.
package external

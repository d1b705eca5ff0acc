// Package report draws one self-contained HTML page that shows a run: its scores, ledger, kept
// tokens by file, the target's weightiest terms and a sample of rows with why they were or were not
// kept.
package report

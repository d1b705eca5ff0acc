// Package report draws one self-contained HTML page that shows a run: its scores, ledger, kept
// tokens by file, the target's weightiest terms and samples of rows (the top of the ranking, either
// side of the cut, and kept rows at random), each shown as text with why it was or was not kept.
package report

// Package selection (folder select/, since select is a Go keyword) turns per-row scores, per-row costs and a FLOP budget into keep-or-drop decisions.
package selection

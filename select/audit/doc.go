// Package audit explains the fate of rows in a run and compares two runs, returning values for a
// caller to print as text or JSON.
package audit

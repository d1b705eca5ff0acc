// Package plan fits saturation curves to pilot fine-tunes and works out which selection method, and how many tokens, a FLOP budget affords best, and writes the plan as a table and as SVG charts.
package plan

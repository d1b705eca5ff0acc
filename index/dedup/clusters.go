package dedup

import (
	"fmt"
	"math"
)

// Clusters is a union–find forest over row numbers 0, 1, 2, …, with path halving (Tarjan and
// van Leeuwen, "Worst-case analysis of set union algorithms", JACM 1984, cited from memory).
// Each cluster is represented by its smallest row, the first in input order: linking always puts
// the larger root under the smaller rather than balancing by rank, which keeps that property at
// a cost of O(log n) amortised per operation instead of nearly constant. Rows never joined are
// clusters of their own. It holds 4 bytes per row up to the largest row seen. The zero value is
// an empty forest.
type Clusters struct {
	parent []uint32
}

// grow makes rows up to row clusters of their own.
func (c *Clusters) grow(row int) {
	for len(c.parent) <= row {
		c.parent = append(c.parent, uint32(len(c.parent)))
	}
}

// Len returns one more than the largest row seen, the rows the forest covers.
func (c *Clusters) Len() int { return len(c.parent) }

// Union puts rows a and b in one cluster.
func (c *Clusters) Union(a, b int) error {
	for _, r := range [2]int{a, b} {
		if r < 0 || r > MaxRow {
			return fmt.Errorf("union rows %d and %d: row %d: %w", a, b, r, ErrRow)
		}
	}
	c.grow(max(a, b))
	ra, rb := c.root(uint32(a)), c.root(uint32(b))
	// The larger root goes under the smaller, so that a root is always its cluster's first row.
	if ra < rb {
		c.parent[rb] = ra
	} else if rb < ra {
		c.parent[ra] = rb
	}
	return nil
}

func (c *Clusters) root(x uint32) uint32 {
	p := c.parent
	for p[x] != x {
		p[x] = p[p[x]]
		x = p[x]
	}
	return x
}

// Find returns the representative of row's cluster: its smallest row. A row beyond Len is its
// own; a negative row has representative -1. Find shortens paths as it goes, so Clusters must not
// be shared between goroutines even for reading.
func (c *Clusters) Find(row int) int {
	switch {
	case row < 0:
		return -1
	case row >= len(c.parent):
		return row
	}
	return int(c.root(uint32(row)))
}

// Groups returns the clusters of two rows or more, each in ascending row order, ordered by their
// first rows.
func (c *Clusters) Groups() [][]int {
	n := len(c.parent)
	count := make([]uint32, n)
	for i := range n {
		count[c.root(uint32(i))]++
	}
	// A root is its cluster's first row, met before the others, so its count can be replaced
	// there by its group's number (1-based; 0 for a row alone).
	var groups [][]int
	for i := range n {
		r := c.root(uint32(i))
		if int(r) == i {
			if count[i] < 2 {
				count[i] = 0
				continue
			}
			groups = append(groups, make([]int, 0, count[i]))
			count[i] = uint32(len(groups))
		}
		if g := count[r]; g > 0 {
			groups[g-1] = append(groups[g-1], i)
		}
	}
	return groups
}

// Keep picks one row per cluster: the best-scored, the earliest on a tie, with NaN below every
// number. For each row i of scores it returns kept[i] = i when row i is kept and otherwise the
// row kept instead. Rows beyond Len are clusters of their own; scores must cover at least Len rows.
func (c *Clusters) Keep(scores []float64) ([]int, error) {
	if len(scores) < len(c.parent) {
		return nil, fmt.Errorf("keep one row per cluster: %d scores for %d rows: %w", len(scores), len(c.parent), ErrLength)
	}
	keepers := Keepers(len(scores), c.Find, func(r int) float64 { return scores[r] })
	kept := make([]int, len(scores))
	for i := range kept {
		kept[i] = int(keepers[c.Find(i)])
	}
	return kept, nil
}

// Keepers picks one row per cluster among rows [0, n), as Keep does, for clusters given by
// cluster, which names each row's cluster by one of its rows (such as its first, as an index's
// dups file does), and scores given by score. It returns, at the row naming each cluster, the row
// kept; other entries are 2³²−1. It holds 4 bytes a row, where Keep's answer takes 8.
func Keepers(n int, cluster func(int) int, score func(int) float64) []uint32 {
	keepers := make([]uint32, n)
	for i := range keepers {
		keepers[i] = math.MaxUint32
	}
	for r := range n {
		c := cluster(r)
		if k := keepers[c]; k == math.MaxUint32 || better(score(r), score(int(k))) {
			keepers[c] = uint32(r)
		}
	}
	return keepers
}

// better reports whether score x beats y, which comes from an earlier row: strictly greater, or a
// number against NaN.
func better(x, y float64) bool {
	return x > y || math.IsNaN(y) && !math.IsNaN(x)
}

// Tally counts, among rows [0, n) whose clusters first names by their first rows (as Find does),
// the rows that are not their cluster's first and the clusters of two rows or more, in one pass and
// an eighth of a byte a row: a cluster is counted at its first row, marked by the others.
func Tally(n int, first func(int) int) (dups, clusters int) {
	marked := make([]uint64, (n+63)/64)
	for r := range n {
		if f := first(r); f != r {
			dups++
			if marked[f/64]&(1<<(f%64)) == 0 {
				marked[f/64] |= 1 << (f % 64)
				clusters++
			}
		}
	}
	return dups, clusters
}

package index

import (
	"bufio"
	"context"
	"encoding/binary"
	"fmt"
	"io"
	"os"
	"slices"
)

// Duplicate is an id that more than one row holds.
type Duplicate struct {
	ID            string
	Rows          int64    // rows holding it
	First, Second Location // its first two rows
}

// hashID is the 64-bit FNV-1a hash of id (the constants of hash/fnv), written out so that hashing
// a row's id allocates nothing.
func hashID(id []byte) uint64 {
	h := uint64(14695981039346656037)
	for _, c := range id {
		h ^= uint64(c)
		h *= 1099511628211
	}
	return h
}

// findDuplicates counts the rows whose id an earlier row already had. Repeated ids are allowed, as
// concatenated pools number their rows each from zero, but they are counted and the first is
// named, since a reader of scores.jsonl must then tell rows apart by position. Only 8 bytes per row
// are held; ids whose hashes collide are compared from the ids file, so the count is exact.
func (b *builder) findDuplicates(ctx context.Context) error {
	if len(b.idHashes) == 0 {
		return nil
	}
	sorted := slices.Clone(b.idHashes)
	slices.Sort(sorted)
	repeated := map[uint64]bool{}
	for i := 1; i < len(sorted); i++ {
		if sorted[i] == sorted[i-1] {
			repeated[sorted[i]] = true
		}
	}
	if len(repeated) == 0 {
		return nil
	}
	f, err := os.Open(b.wd.path(idsFile))
	if err != nil {
		return b.wd.err("build index: read back", err)
	}
	defer f.Close()
	r := bufio.NewReader(f)
	rowsOf := map[string][]int64{}
	var buf []byte
	var firstRow, firstOf int64 = -1, -1
	for row, h := range b.idHashes {
		if row%(1<<20) == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		n, err := binary.ReadUvarint(r)
		if err != nil {
			return fmt.Errorf("build index: read back %s: %w", b.wd.shown(f.Name()), bareErr(err))
		}
		buf = slices.Grow(buf[:0], int(n))[:n]
		if _, err := io.ReadFull(r, buf); err != nil {
			return fmt.Errorf("build index: read back %s: %w", b.wd.shown(f.Name()), bareErr(err))
		}
		if !repeated[h] {
			continue
		}
		prev := rowsOf[string(buf)]
		if len(prev) > 0 {
			b.meta.DuplicateIDs++
			if firstRow < 0 {
				firstRow, firstOf = int64(row), prev[0]
			}
		}
		rowsOf[string(buf)] = append(prev, int64(row))
	}
	if firstRow < 0 {
		return nil
	}
	locs := [2]Location{}
	for i, row := range []int64{firstOf, firstRow} {
		var rec [rowRecSize]byte
		rf, err := os.Open(b.wd.path(rowsFile))
		if err != nil {
			return b.wd.err("build index: read back", err)
		}
		_, err = rf.ReadAt(rec[:], row*rowRecSize)
		rf.Close()
		if err != nil {
			return fmt.Errorf("build index: read back %s: %w", b.wd.shown(rf.Name()), bareErr(err))
		}
		rr := getRowRec(rec[:])
		locs[i] = Location{Source: int(rr.src), File: b.paths[rr.src], Line: int64(rr.line), Offset: int64(rr.off), Length: int64(rr.n)}
	}
	var id string
	for s, rows := range rowsOf {
		if rows[0] == firstOf {
			id = s
		}
	}
	b.firstDup = &Duplicate{ID: id, Rows: int64(len(rowsOf[id])), First: locs[0], Second: locs[1]}
	return nil
}

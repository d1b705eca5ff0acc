package index

import (
	"errors"
	"fmt"
	"os"
	"slices"
)

// Rebuild returns the pool files, in order, and the build options that make in one build the index
// ix is: one index folder, or the segments of a set. The settings are those meta.json recorded
// (text fields or detection, id and token fields, tokenizer, analyzer, row limit, duplicates and
// their threshold), over those of o; o's other fields (memory, workers, progress, command) stay. Each file is given as
// its index recorded it when that still names the file (so a build from the folder the segments
// were built in records the same paths), else where the index finds it, and is checked against
// the SHA-256 recorded: a file changed since would make another index. Reading the files twice is
// the price of that check.
//
// A build with them writes the bytes an index of the same files built in one go would have, since
// it is one: it analyses every row again, at the cost of a build.
func (ix *Index) Rebuild(o Options) ([]string, Options, error) {
	segs := []*Index{ix}
	if ix.set != nil {
		segs = ix.set.segs
	}
	m := ix.meta
	opt := o
	opt.Text, opt.ID, opt.Tokens, opt.Tokenizer, opt.Analyzer, opt.MaxRowBytes = "", m.IDField, m.TokensField, m.Tokenizer, m.Analyzer, m.MaxRowBytes
	if !m.TextDetected {
		opt.Text = m.Text
	}
	d0 := segs[0].meta.Dups
	opt.NoDups, opt.NearDup = d0 == nil, 0
	if d0 != nil {
		opt.NearDup = d0.Threshold
	}
	var files []string
	// The segments and the set file are inputs of the build: it may not replace them.
	opt.Inputs = append(slices.Clone(o.Inputs), ix.dir)
	for _, g := range segs {
		if g != ix {
			opt.Inputs = append(opt.Inputs, g.dir)
		}
	}
	for _, g := range segs {
		if d := g.meta.Dups; (d == nil) != (d0 == nil) || d != nil && d.Threshold != d0.Threshold {
			return nil, opt, fmt.Errorf("rebuild %s: segments %s and %s found duplicates differently (%s and %s): %w",
				ix.dir, segs[0].dir, g.dir, dupsWord(d0), dupsWord(d), ErrIncompatible)
		}
		for i, s := range g.meta.Sources {
			if s.Stored != "" {
				return nil, opt, fmt.Errorf("rebuild %s: source %d of %s (%s) was read from a stream and lives only in the index; a rebuild reads pool files", ix.dir, i, g.dir, s.Path)
			}
			path, err := g.findSource(s)
			if err != nil {
				return nil, opt, fmt.Errorf("rebuild %s: %w", ix.dir, err)
			}
			files = append(files, path)
		}
	}
	if m.Tokenizer != "" {
		if sum, err := FileSHA256(m.Tokenizer); err != nil || sum != m.TokenizerSHA256 {
			return nil, opt, fmt.Errorf("rebuild %s: tokenizer %s is not the file the index counted tokens with (SHA-256 %.12s): %v", ix.dir, m.Tokenizer, m.TokenizerSHA256, errOr(err, "its content differs"))
		}
	}
	return files, opt, nil
}

// RebuildFrom opens the index or index set at path and returns its Rebuild.
func RebuildFrom(path string, o Options) ([]string, Options, error) {
	ix, err := Open(path)
	if err != nil {
		return nil, o, err
	}
	defer ix.Close()
	return ix.Rebuild(o)
}

// findSource returns the path to read pool file s from: the path as given when it was indexed, if
// it is still the file the index finds, else the one the index finds; either must hold what was
// indexed.
func (ix *Index) findSource(s Source) (string, error) {
	var found string
	for _, p := range ix.sourcePaths(s) {
		if _, err := os.Stat(p); err == nil {
			found = p
			break
		}
	}
	if found == "" {
		return "", fmt.Errorf("%s (indexed in %s): %w", s.Path, ix.dir, os.ErrNotExist)
	}
	if same(found, s.Path) {
		found = s.Path
	}
	sum, err := FileSHA256(found)
	if err != nil {
		return "", err
	}
	if sum != s.SHA256 {
		return "", fmt.Errorf("%s has changed since %s indexed it (SHA-256 %.12s, was %.12s)", found, ix.dir, sum, s.SHA256)
	}
	return found, nil
}

func dupsWord(d *Dups) string {
	if d == nil {
		return "none"
	}
	return fmt.Sprintf("near-dup %v", d.Threshold)
}

func errOr(err error, s string) error {
	if err != nil {
		return err
	}
	return errors.New(s)
}

// same reports whether a and b name the same file.
func same(a, b string) bool {
	x, err1 := os.Stat(a)
	y, err2 := os.Stat(b)
	return err1 == nil && err2 == nil && os.SameFile(x, y)
}

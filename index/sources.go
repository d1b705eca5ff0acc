package index

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
)

// poolSuffixes are the names Sources takes from a folder: JSONL, plain or compressed.
func poolSuffixes() []string {
	return []string{".jsonl", ".jsonl.gz", ".jsonl.zst", ".json", ".json.gz", ".json.zst"}
}

// Sources resolves the pool arguments of a build before any work: a file stands for itself, "-"
// for stdin, and a folder for the JSONL files directly in it, in name order (a folder with none is
// refused). It returns the files and their total size, for progress; a missing file is refused.
func Sources(args []string) ([]string, int64, error) {
	var out []string
	var total int64
	for _, p := range args {
		if p == "-" {
			out = append(out, p)
			continue
		}
		fi, err := os.Stat(p)
		if err != nil {
			var pe *os.PathError
			if errors.As(err, &pe) {
				err = pe.Err
			}
			return nil, 0, fmt.Errorf("read %s: %w", p, err)
		}
		if !fi.IsDir() {
			out, total = append(out, p), total+fi.Size()
			continue
		}
		entries, err := os.ReadDir(p)
		if err != nil {
			return nil, 0, fmt.Errorf("read %s: %w", p, err)
		}
		n := len(out)
		for _, e := range entries { // ReadDir sorts by name
			if e.Type().IsRegular() && slices.ContainsFunc(poolSuffixes(), func(s string) bool { return strings.HasSuffix(e.Name(), s) }) {
				info, err := e.Info()
				if err != nil {
					return nil, 0, fmt.Errorf("read %s: %w", p, err)
				}
				out, total = append(out, filepath.Join(p, e.Name())), total+info.Size()
			}
		}
		if len(out) == n {
			return nil, 0, fmt.Errorf("read %s: a folder with no JSONL files in it (names ending %s)", p, strings.Join(poolSuffixes(), ", "))
		}
	}
	return out, total, nil
}

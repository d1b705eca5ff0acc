package demodata

import (
	"fmt"
	"os"
	"path/filepath"

	"sluice/index/atomicdir"
)

// folder describes the demo's folder: the built-in pool, byte for byte, and nothing but the
// demo's files, so that a rerun replaces only what an earlier demo wrote.
func folder() atomicdir.Kind {
	return atomicdir.Kind{Name: "demo", Mark: "pool.jsonl",
		IsOur: func(b []byte) bool { return string(b) == pool },
		Holds: func(name string) bool {
			return name == "pool.jsonl" || name == "target.jsonl" || name == "eval.jsonl" || name == "index" || name == "run"
		}}
}

// WriteFiles writes the pool, target and evaluation rows into the folder out, which must be new,
// empty or an earlier demo's (and not inside a folder of one of the kinds in within), and returns
// the pool's and target's paths.
func WriteFiles(out string, within ...atomicdir.Kind) (poolPath, targetPath string, err error) {
	if _, err := os.Stat(out); err == nil {
		if err := atomicdir.CheckOut(out, folder(), nil, within...); err != nil {
			return "", "", err
		}
	}
	if err := os.MkdirAll(out, 0o755); err != nil {
		return "", "", fmt.Errorf("demo: %w", err)
	}
	poolPath, targetPath = filepath.Join(out, "pool.jsonl"), filepath.Join(out, "target.jsonl")
	for _, f := range []struct {
		path string
		data []byte
	}{{poolPath, Pool()}, {targetPath, Target()}, {filepath.Join(out, "eval.jsonl"), Eval()}} {
		if err := os.WriteFile(f.path, f.data, 0o644); err != nil {
			return "", "", fmt.Errorf("demo: %w", err)
		}
	}
	return poolPath, targetPath, nil
}

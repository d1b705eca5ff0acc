package index

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
)

// Identity is the SHA-256 of an index's content: its meta.json, which holds the checksum of
// every other file of the index, less the command line that built it. Two builds of the same
// pool with the same settings have the same identity however they were asked for (-q or not), so
// a rebuild that changes nothing breaks no run made on the index.
//
// A set file's identity is the SHA-256 of its segments' identities, in order, and whether they may
// share a pool file: what the set's scores depend on, not where its segments lie.
func Identity(dir string) (string, error) {
	if isSetFile(dir) {
		return setIdentity(dir)
	}
	b, err := os.ReadFile(filepath.Join(dir, metaFile))
	if err != nil {
		return "", err
	}
	var fields map[string]json.RawMessage
	if err := json.Unmarshal(b, &fields); err != nil {
		return "", fmt.Errorf("read %s: %w", filepath.Join(dir, metaFile), err)
	}
	delete(fields, "command")
	canon, err := json.Marshal(fields) // keys sorted, so the same fields give the same bytes
	if err != nil {
		return "", err
	}
	sum := sha256.Sum256(canon)
	return hex.EncodeToString(sum[:]), nil
}

func setIdentity(path string) (string, error) {
	dirs, overlap, err := readSet(path)
	if err != nil {
		return "", err
	}
	h := sha256.New()
	fmt.Fprintf(h, "%s\nallow-overlap %v\n", SetMagic, overlap)
	for _, d := range dirs {
		id, err := Identity(d)
		if err != nil {
			return "", fmt.Errorf("index set %s: %w", path, err)
		}
		fmt.Fprintln(h, id)
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

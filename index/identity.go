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
func Identity(dir string) (string, error) {
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

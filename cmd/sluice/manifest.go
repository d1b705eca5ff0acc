package main

import (
	"bufio"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"

	"github.com/spf13/pflag"
)

// manifestFile names the run's record of how it was made.
const manifestFile = "manifest.json"

// manifest is what a run folder records of itself: enough to explain any of its rows again and to
// check that nothing in it, nor the index it used, has changed since.
type manifest struct {
	Sluice   string            `json:"sluice"`
	Command  []string          `json:"command"`
	Settings runSettings       `json:"settings"`
	Index    fileRef           `json:"index"`  // the index folder and the SHA-256 of its meta.json
	Target   fileRef           `json:"target"` // the target file and its SHA-256
	Files    map[string]string `json:"files"`  // SHA-256 of every other file of the run
}

type fileRef struct {
	Path   string `json:"path"`
	SHA256 string `json:"sha256"`
}

// runSettings are a pick's settings with every default resolved.
type runSettings struct {
	Analyzer    string  `json:"analyzer"`
	TargetText  string  `json:"target_text"`
	TargetID    string  `json:"target_id,omitempty"`
	Method      string  `json:"method"`
	Aggregate   string  `json:"aggregate"`
	K1          float64 `json:"k1"`
	B           float64 `json:"b"`
	Attribute   bool    `json:"attribute"`
	Budget      float64 `json:"budget"`
	BudgetHow   string  `json:"budget_how"`
	TrainParams float64 `json:"train_params"`
	Epochs      float64 `json:"epochs"`
	Fill        bool    `json:"fill"`
	MaxRows     int     `json:"max_rows"`
	MinScore    float64 `json:"min_score"`
	Kept        string  `json:"kept"` // the kept file's name
}

func sha256File(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", fmt.Errorf("read %s: %w", path, err)
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

// writeManifest records the hash of every file already in the working folder tmp, taking those
// known from writing them and reading the rest, and writes the manifest there.
func writeManifest(tmp string, m *manifest, known map[string]string) error {
	entries, err := os.ReadDir(tmp)
	if err != nil {
		return fmt.Errorf("write manifest: %w", err)
	}
	m.Files = map[string]string{}
	for _, e := range entries {
		if e.Name() == manifestFile {
			continue
		}
		if sum, ok := known[e.Name()]; ok {
			m.Files[e.Name()] = sum
			continue
		}
		if m.Files[e.Name()], err = sha256File(filepath.Join(tmp, e.Name())); err != nil {
			return fmt.Errorf("write manifest: %w", err)
		}
	}
	b, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return err
	}
	return writeFileBytes(filepath.Join(tmp, manifestFile), append(b, '\n'))
}

func readManifest(run string) (*manifest, error) {
	b, err := os.ReadFile(filepath.Join(run, manifestFile))
	if err != nil {
		return nil, fmt.Errorf("read run %s: %w", run, err)
	}
	var m manifest
	if err := json.Unmarshal(b, &m); err != nil {
		return nil, fmt.Errorf("read run %s: %s: %w", run, manifestFile, err)
	}
	return &m, nil
}

// eachScoreLine calls fn with every line of run's scores.jsonl and its row number, the line's place
// in the file from 0 (the n-th line is the n-th indexed row). An error of fn comes back with the
// file and line it was on.
func eachScoreLine(run string, fn func(row int, line []byte) error) error {
	path := filepath.Join(run, "scores.jsonl")
	f, err := os.Open(path)
	if err != nil {
		return fmt.Errorf("read run %s: %w", run, err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	sc.Buffer(nil, 16<<20) // a line holds two ids, each up to what the index took
	for row := 0; sc.Scan(); row++ {
		if err := fn(row, sc.Bytes()); err != nil {
			return fmt.Errorf("read %s:%d: %w", path, row+1, err)
		}
	}
	if err := sc.Err(); err != nil {
		return fmt.Errorf("read %s: %w", path, err)
	}
	return nil
}

// relocated says where a run's index and target are now, when they are no longer where its manifest
// says (the run was copied to another machine, or made from another folder); an empty field keeps
// the manifest's path. The hashes in the manifest are checked all the same.
type relocated struct{ index, target string }

func addMovedFlags(fs *pflag.FlagSet) {
	fs.String("index", "", "the run's index folder, if not where the run's manifest says")
	fs.String("target", "", "the run's target file, if not where the run's manifest says")
}

func movedFrom(fs *pflag.FlagSet) relocated {
	var mv relocated
	mv.index, _ = fs.GetString("index")
	mv.target, _ = fs.GetString("target")
	return mv
}

func (mv relocated) apply(m *manifest) {
	if mv.index != "" {
		m.Index.Path = mv.index
	}
	if mv.target != "" {
		m.Target.Path = mv.target
	}
}

// checkInputs reports whether the index and target at the manifest's paths are the ones the run
// used: the index by its meta.json, which holds the checksum of every other index file.
func checkInputs(what, run string, m *manifest) error {
	got, err := sha256File(filepath.Join(m.Index.Path, "meta.json"))
	if err != nil {
		return fmt.Errorf("%s %s: index %s: %w (if it has moved, say where with --index)", what, run, m.Index.Path, err)
	}
	if got != m.Index.SHA256 {
		return fmt.Errorf("%s %s: index %s is not the one the run used (run 'sluice verify %s')", what, run, m.Index.Path, run)
	}
	got, err = sha256File(m.Target.Path)
	if err != nil {
		return fmt.Errorf("%s %s: target %s: %w (if it has moved, say where with --target)", what, run, m.Target.Path, err)
	}
	if got != m.Target.SHA256 {
		return fmt.Errorf("%s %s: target %s has changed since the run (run 'sluice verify %s')", what, run, m.Target.Path, run)
	}
	return nil
}

// verifyRun rechecks every hash the manifest holds, and the index, and returns what differs.
func verifyRun(run string, m *manifest) []string {
	var bad []string
	names := make([]string, 0, len(m.Files))
	for name := range m.Files {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		got, err := sha256File(filepath.Join(run, name))
		switch {
		case err != nil:
			bad = append(bad, fmt.Sprintf("%s: %v", name, err))
		case got != m.Files[name]:
			bad = append(bad, fmt.Sprintf("%s: changed since the run (SHA-256 %s, manifest says %s)", name, got[:12], m.Files[name][:12]))
		}
	}
	if got, err := sha256File(filepath.Join(m.Index.Path, "meta.json")); err != nil {
		bad = append(bad, fmt.Sprintf("index %s: %v", m.Index.Path, err))
	} else if got != m.Index.SHA256 {
		bad = append(bad, fmt.Sprintf("index %s: not the index the run used (meta.json SHA-256 %s, manifest says %s)", m.Index.Path, got[:12], m.Index.SHA256[:12]))
	}
	if got, err := sha256File(m.Target.Path); err != nil {
		bad = append(bad, fmt.Sprintf("target %s: %v", m.Target.Path, err))
	} else if got != m.Target.SHA256 {
		bad = append(bad, fmt.Sprintf("target %s: changed since the run", m.Target.Path))
	}
	return bad
}

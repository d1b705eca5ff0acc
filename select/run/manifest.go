package run

import (
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"sluice/index"
)

// The files of a run folder. The kept rows' name depends on compression: see KeptName.
const (
	ManifestFile = "manifest.json"
	ScoresFile   = "scores.jsonl"
	LedgerFile   = "ledger.json"
	RejectedFile = "rejected.jsonl"
)

// KeptName is the kept file's name for a compression choice (none, gzip or zstd).
func KeptName(compress string) string {
	switch compress {
	case "gzip":
		return "kept.jsonl.gz"
	case "zstd":
		return "kept.jsonl.zst"
	}
	return "kept.jsonl"
}

// Manifest is what a run folder records of itself: enough to explain any of its rows again and to
// check that nothing in it, nor the index it used, has changed since.
type Manifest struct {
	Sluice   string            `json:"sluice"`
	Command  []string          `json:"command"`
	Settings Settings          `json:"settings"`
	Index    FileRef           `json:"index"`            // the index folder and the SHA-256 of its meta.json
	Target   FileRef           `json:"target"`           // the target file and its SHA-256
	Inputs   []FileRef         `json:"inputs,omitempty"` // the method's other inputs: scores, vectors
	Sets     []SetRef          `json:"sets,omitempty"`   // with several target sets, each, Target the first
	Files    map[string]string `json:"files"`            // SHA-256 of every other file of the run
}

// FileRef names an input of a run and the SHA-256 it had. For the index, SHA256 is that of its
// meta.json and Identity that of its content (see IndexIdentity); a manifest without Identity is
// checked by SHA256 alone.
type FileRef struct {
	Path     string `json:"path"`
	SHA256   string `json:"sha256"`
	Identity string `json:"identity,omitempty"`
}

// sameIndex reports whether the index at dir is the one ref names, and what it found if not.
func sameIndex(ref FileRef, dir string) (bool, string, error) {
	if ref.Identity == "" {
		got, err := sha256File(filepath.Join(dir, "meta.json"))
		return got == ref.SHA256, "meta.json SHA-256 " + short(got) + ", manifest says " + short(ref.SHA256), err
	}
	got, err := index.Identity(dir)
	return got == ref.Identity, "identity " + short(got) + ", manifest says " + short(ref.Identity), err
}

// Settings are a pick's settings with every default resolved.
type Settings struct {
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
	// KeptFormat is how kept rows were written: "" (or "rows") byte for byte, or in one schema.
	KeptFormat string `json:"kept_format,omitempty"`
	// NoScoreFloor says a model-based method's scores had no --min-score floor.
	NoScoreFloor bool            `json:"no_score_floor,omitempty"`
	Prefilter    string          `json:"prefilter,omitempty"` // a cascade's first stage, METHOD:SHARE% or METHOD:TOKENS
	Ngram        *NgramOptions   `json:"ngram,omitempty"`
	Scores       *ScoresOptions  `json:"scores,omitempty"`
	Join         string          `json:"join,omitempty"`    // how brought-in scores were joined: auto, id or row
	Missing      string          `json:"missing,omitempty"` // what rows without a brought-in score got
	Vectors      *VectorsOptions `json:"vectors,omitempty"`
	Guards       Guards          `json:"guards"`
}

// MethodName names the method as summaries and pages show it: bm25/sum, ngram-3, ngram-3 after
// bm25:20%.
func (s Settings) MethodName() string {
	name := s.Method
	switch {
	case s.Method == MethodVectors && s.Aggregate == "max":
		name += " (nearest target row)"
	case s.Method == MethodVectors:
		name += " (target centroid)"
	case s.Aggregate != "":
		name += "/" + s.Aggregate
	case s.Ngram != nil:
		name = fmt.Sprintf("%s-%d", s.Method, s.Ngram.Order)
		if s.Ngram.TargetOnly {
			name += " (target model alone)"
		}
	}
	if s.Prefilter != "" {
		name += " after " + s.Prefilter
	}
	return name
}

// ReadManifest reads the manifest of the run folder dir.
func ReadManifest(dir string) (*Manifest, error) {
	b, err := os.ReadFile(filepath.Join(dir, ManifestFile))
	if err != nil {
		return nil, fmt.Errorf("read run %s: %w", dir, err)
	}
	var m Manifest
	if err := json.Unmarshal(b, &m); err != nil {
		return nil, fmt.Errorf("read run %s: %s: %w", dir, ManifestFile, err)
	}
	return &m, nil
}

// writeManifest records the hash of every file already in the working folder tmp, taking those
// known from writing them and reading the rest, and writes the manifest there.
func writeManifest(tmp, out string, m *Manifest, known map[string]string) error {
	entries, err := os.ReadDir(tmp)
	if err != nil {
		return fmt.Errorf("write manifest: %w", err)
	}
	m.Files = map[string]string{}
	for _, e := range entries {
		if e.Name() == ManifestFile {
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
	return writeFileBytes(filepath.Join(tmp, ManifestFile), filepath.Join(out, ManifestFile), append(b, '\n'))
}

func sha256File(path string) (string, error) { return index.FileSHA256(path) }

// Inputs says where a run's index and target are now, when they are no longer where its manifest
// says (the run was copied to another machine, or made from another folder); an empty field keeps
// the manifest's path. The hashes in the manifest are checked all the same.
type Inputs struct {
	Index, Target string
	MoreTargets   []string // with several target sets, the second and later, in their order
}

// Apply points m at the inputs' new places.
func (in Inputs) Apply(m *Manifest) {
	if in.Index != "" {
		m.Index.Path = in.Index
	}
	if in.Target != "" {
		m.Target.Path = in.Target
		if len(m.Sets) > 0 {
			m.Sets[0].Path = in.Target
		}
	}
	for i, t := range in.MoreTargets {
		if i+1 < len(m.Sets) && t != "" {
			m.Sets[i+1].Path = t
		}
	}
}

// setFiles are the target files of a run with several sets after the first (which is its Target),
// as inputs to check.
func (m *Manifest) setFiles() []FileRef {
	var refs []FileRef
	for i, s := range m.Sets {
		if i > 0 {
			refs = append(refs, FileRef{Path: s.Path, SHA256: s.SHA256})
		}
	}
	return refs
}

// CheckInputs reports whether the index and target at the manifest's paths are the ones the run
// used: the index by its meta.json, which holds the checksum of every other index file. what names
// the caller's work in the error ("explain", "report").
func CheckInputs(what, dir string, m *Manifest) error {
	same, _, err := sameIndex(m.Index, m.Index.Path)
	if err != nil {
		return fmt.Errorf("%s %s: index %s: %w (if it has moved, say where with --index)", what, dir, m.Index.Path, err)
	}
	if !same {
		return fmt.Errorf("%s %s: index %s is not the one the run used (run 'sluice verify %s')", what, dir, m.Index.Path, dir)
	}
	got, err := sha256File(m.Target.Path)
	if err != nil {
		return fmt.Errorf("%s %s: target %s: %w (if it has moved, say where with --target)", what, dir, m.Target.Path, err)
	}
	if got != m.Target.SHA256 {
		return fmt.Errorf("%s %s: target %s has changed since the run (run 'sluice verify %s')", what, dir, m.Target.Path, dir)
	}
	for _, in := range append(m.setFiles(), m.Inputs...) {
		if got, err := sha256File(in.Path); err != nil || got != in.SHA256 {
			return fmt.Errorf("%s %s: %s is not the file the run read (run 'sluice verify %s')", what, dir, in.Path, dir)
		}
	}
	return nil
}

// Verify rechecks every hash the manifest of the run folder dir holds, and the index and target,
// and returns what differs, one line each.
func Verify(dir string, m *Manifest) []string {
	var bad []string
	names := make([]string, 0, len(m.Files))
	for name := range m.Files {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		got, err := sha256File(filepath.Join(dir, name))
		switch {
		case err != nil:
			bad = append(bad, fmt.Sprintf("%s: %v", name, err))
		case got != m.Files[name]:
			bad = append(bad, fmt.Sprintf("%s: changed since the run (SHA-256 %s, manifest says %s)", name, got[:12], short(m.Files[name])))
		}
	}
	if same, what, err := sameIndex(m.Index, m.Index.Path); err != nil {
		bad = append(bad, fmt.Sprintf("index %s: %v", m.Index.Path, err))
	} else if !same {
		bad = append(bad, fmt.Sprintf("index %s: not the index the run used (%s)", m.Index.Path, what))
	} else if err := checkIndex(m.Index.Path); err != nil {
		bad = append(bad, fmt.Sprintf("index %s: %v", m.Index.Path, err))
	}
	if got, err := sha256File(m.Target.Path); err != nil {
		bad = append(bad, fmt.Sprintf("target %s: %v", m.Target.Path, err))
	} else if got != m.Target.SHA256 {
		bad = append(bad, fmt.Sprintf("target %s: changed since the run", m.Target.Path))
	}
	for _, in := range append(m.setFiles(), m.Inputs...) {
		if got, err := sha256File(in.Path); err != nil {
			bad = append(bad, fmt.Sprintf("input %s: %v", in.Path, err))
		} else if got != in.SHA256 {
			bad = append(bad, fmt.Sprintf("input %s: changed since the run", in.Path))
		}
	}
	return bad
}

// checkIndex checks every byte of the index at dir against its checksums (index.Index.Check): a
// command checks only the parts it reads.
func checkIndex(dir string) error {
	ix, err := index.Open(dir)
	if err != nil {
		return err
	}
	defer ix.Close()
	return ix.Check()
}

// short is the first 12 hex digits of a hash, or all of a damaged one.
func short(h string) string {
	if len(h) > 12 {
		return h[:12]
	}
	return h
}

// VerifyRuns verifies each run folder of dirs (Verify), its inputs looked for where in says,
// writes a line to w for each that is as it was left, and returns every difference found.
func VerifyRuns(w io.Writer, dirs []string, in Inputs) error {
	var bad []string
	for _, dir := range dirs {
		m, err := ReadManifest(dir)
		if err != nil {
			return err
		}
		in.Apply(m)
		diffs := Verify(dir, m)
		for _, d := range diffs {
			bad = append(bad, dir+": "+d)
		}
		if len(diffs) == 0 {
			fmt.Fprintf(w, "%s: ok (%d files, target and index as used)\n", dir, len(m.Files))
		}
	}
	if len(bad) > 0 {
		return fmt.Errorf("%d difference(s):\n  %s", len(bad), strings.Join(bad, "\n  "))
	}
	return nil
}

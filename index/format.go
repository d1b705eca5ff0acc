package index

import (
	"encoding/json"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"io/fs"
	"os"
	"path/filepath"
)

// Format and Version name the on-disk layout. Version changes whenever a file's encoding changes, so an
// older sluice refuses a newer index instead of misreading it.
const (
	Format  = "sluice-index"
	Version = 1
)

// File names inside an index folder.
const (
	metaFile     = "meta.json"
	lexiconFile  = "lexicon"
	postingsFile = "postings"
	rowsFile     = "rows"
	normsFile    = "norms"
	idsFile      = "ids"
	rejectedFile = "rejected.jsonl"
	stdinPrefix  = "stdin"
)

// Errors returned when opening an index; test with errors.Is.
var (
	ErrNotIndex = errors.New("not a sluice index")
	ErrVersion  = errors.New("unsupported index format version")
	ErrDamaged  = errors.New("index is damaged")
	// ErrSourceChanged means a pool file no longer holds the bytes the index was built from.
	ErrSourceChanged = errors.New("pool file changed since it was indexed")
)

var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// Meta is the content of meta.json: everything needed to trust, reuse and explain an index.
type Meta struct {
	Format        string          `json:"format"`
	Version       int             `json:"version"`
	Analyzer      string          `json:"analyzer"`
	AnalyzerChain string          `json:"analyzer_chain"`
	Text          string          `json:"text"`
	TextDetected  bool            `json:"text_detected"`
	IDField       string          `json:"id_field,omitempty"`
	TokensField   string          `json:"tokens_field,omitempty"`
	MaxRowBytes   int             `json:"max_row_bytes"`
	Rows          int64           `json:"rows"`
	RowsRead      int64           `json:"rows_read"`
	RowsRejected  int64           `json:"rows_rejected"`
	BlankLines    int64           `json:"blank_lines"`
	DuplicateIDs  int64           `json:"duplicate_ids,omitempty"` // rows whose id an earlier row already had
	TotalLen      int64           `json:"total_len"`
	AvgLen        float64         `json:"avg_len"`
	Terms         int64           `json:"terms"`
	Postings      int64           `json:"postings"`
	TextBytes     int64           `json:"text_bytes"`
	Sources       []Source        `json:"sources"`
	Files         map[string]File `json:"files"`
	Command       []string        `json:"command,omitempty"` // the command line that built it, when given
}

// Source is one pool file as it was when indexed.
type Source struct {
	Path   string `json:"path"`
	Stored string `json:"stored,omitempty"` // file inside the index folder holding the bytes, for stdin
	// Locate is where to open the file to copy rows from it: the path as given when it was absolute,
	// else relative to the index folder, so a pick run from any folder finds it and the index bytes do
	// not depend on where the build ran.
	Locate      string `json:"locate,omitempty"`
	Size        int64  `json:"size"`
	SHA256      string `json:"sha256"`
	Compression string `json:"compression"`
	Rows        int64  `json:"rows"`
}

// File is the checksum of one file of the index folder.
type File struct {
	Size   int64  `json:"size"`
	CRC32C string `json:"crc32c"`
}

// pathErr words a file system error as "verb path: cause", where os would say "verb open path: cause".
func pathErr(verb string, err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return fmt.Errorf("%s %s: %w", verb, pe.Path, pe.Err)
	}
	return fmt.Errorf("%s: %w", verb, err)
}

func checksumFile(path string) (File, error) {
	f, err := os.Open(path)
	if err != nil {
		return File{}, err
	}
	defer f.Close()
	h := crc32.New(castagnoli)
	n, err := io.Copy(h, f)
	if err != nil {
		return File{}, fmt.Errorf("read %s: %w", path, err)
	}
	return File{Size: n, CRC32C: fmt.Sprintf("%08x", h.Sum32())}, nil
}

// readMeta reads and checks meta.json without looking at the other files.
func readMeta(dir string) (*Meta, error) {
	b, err := os.ReadFile(filepath.Join(dir, metaFile))
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			if _, serr := os.Stat(dir); serr != nil {
				return nil, pathErr("open index", serr)
			}
			return nil, fmt.Errorf("open index %s: no %s: %w", dir, metaFile, ErrNotIndex)
		}
		return nil, fmt.Errorf("open index %s: %w", dir, err)
	}
	var m Meta
	if err := json.Unmarshal(b, &m); err != nil {
		return nil, fmt.Errorf("open index %s: %s: %v: %w", dir, metaFile, err, ErrDamaged)
	}
	if m.Format != Format {
		return nil, fmt.Errorf("open index %s: format %q: %w", dir, m.Format, ErrNotIndex)
	}
	if m.Version != Version {
		return nil, fmt.Errorf("open index %s: version %d, this sluice reads version %d (rebuild the index): %w", dir, m.Version, Version, ErrVersion)
	}
	return &m, nil
}

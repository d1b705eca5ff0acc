package index

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"io/fs"
	"os"
	"strings"

	"sluice/index/jsonl"
)

// Format and Version name the on-disk layout. Version changes whenever a file's encoding changes, so an
// older sluice refuses a newer index instead of misreading it. Version is the newest this sluice
// reads and writes; it reads every version from 1.
//
// Version 2 differs from 1 in meta.json's text spec alone, which may hold alternatives ("|"), a
// meaning a version-1 reader would take for part of a key. An index whose spec has one alternative
// is written as version 1, which every sluice reads alike.
const (
	Format  = "sluice-index"
	Version = 2
)

// versionFor is the version an index with text spec sp is written as: the oldest that reads it.
func versionFor(sp jsonl.Spec) int {
	if len(sp.Alternatives()) > 1 {
		return 2
	}
	return 1
}

// v1Spec rewrites a text spec written by version 1, where "|" was a character of a key, in the
// syntax of today's, where it separates alternatives unless escaped.
func v1Spec(text string) string {
	var b strings.Builder
	for i := 0; i < len(text); i++ {
		switch c := text[i]; {
		case c == '\\' && i+1 < len(text):
			b.WriteByte(c)
			i++
			b.WriteByte(text[i])
		case c == '|':
			b.WriteString(`\|`)
		default:
			b.WriteByte(c)
		}
	}
	return b.String()
}

// File names inside an index folder.
const (
	metaFile     = "meta.json"
	lexiconFile  = "lexicon"
	postingsFile = "postings"
	rowsFile     = "rows"
	normsFile    = "norms"
	idsFile      = "ids"
	rejectedFile = "rejected.jsonl"
	dupsFile     = "dups"
	// contamFile (build_excl.go) is listed with these.
	stdinPrefix = "stdin"
)

// Errors returned when opening an index; test with errors.Is.
var (
	ErrNotIndex = errors.New("not a sluice index")
	ErrVersion  = errors.New("unsupported index format version")
	ErrDamaged  = errors.New("index is damaged")
	// ErrSourceChanged means a pool file no longer holds the bytes the index was built from.
	ErrSourceChanged = errors.New("pool file changed since it was indexed")
	// ErrNoSegment means OpenShard was asked for a segment the set does not have.
	ErrNoSegment = errors.New("no such segment")
)

var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// Meta is the content of meta.json: everything needed to trust, reuse and explain an index.
type Meta struct {
	Format        string `json:"format"`
	Version       int    `json:"version"`
	Analyzer      string `json:"analyzer"`
	AnalyzerChain string `json:"analyzer_chain"`
	Text          string `json:"text"`
	TextDetected  bool   `json:"text_detected"`
	IDField       string `json:"id_field,omitempty"`
	TokensField   string `json:"tokens_field,omitempty"`
	// Tokenizer is the tokenizer file that counted each row's tokens, and its SHA-256.
	Tokenizer       string          `json:"tokenizer,omitempty"`
	TokenizerSHA256 string          `json:"tokenizer_sha256,omitempty"`
	MaxRowBytes     int             `json:"max_row_bytes"`
	Rows            int64           `json:"rows"`
	RowsRead        int64           `json:"rows_read"`
	RowsRejected    int64           `json:"rows_rejected"`
	BlankLines      int64           `json:"blank_lines"`
	DuplicateIDs    int64           `json:"duplicate_ids,omitempty"` // rows whose id an earlier row already had
	TotalLen        int64           `json:"total_len"`
	AvgLen          float64         `json:"avg_len"`
	Terms           int64           `json:"terms"`
	Postings        int64           `json:"postings"`
	TextBytes       int64           `json:"text_bytes"`
	Sources         []Source        `json:"sources"`
	Files           map[string]File `json:"files"`
	Command         []string        `json:"command,omitempty"` // the command line that built it, when given
	// Dups describes the dups file, when the build found duplicates.
	Dups *Dups `json:"duplicates,omitempty"`
	// Excluded describes contaminated.jsonl, when the build checked rows against evaluation files.
	Excluded *Excluded `json:"excluded,omitempty"`
}

// Source is one pool file as it was when indexed.
type Source struct {
	Path string `json:"path"`
	// Stored is the file inside the index folder holding the bytes read, for a source that could not
	// be read again: stdin ("stdin") or another stream, such as a pipe ("stdin-N" for source N).
	Stored string `json:"stored,omitempty"`
	// Locate is where to open the file to copy rows from it: the path as given when it was absolute,
	// else relative to the index folder, so a pick run from any folder finds it and the index bytes do
	// not depend on where the build ran. The relative path is taken between the two with their links
	// resolved, so it also holds from the folder named through a link, by its real path, or as ".".
	Locate      string `json:"locate,omitempty"`
	Size        int64  `json:"size"`
	SHA256      string `json:"sha256"`
	Compression string `json:"compression"`
	Rows        int64  `json:"rows"`
	// Detected is the text shape found in the file's first rows when the build was given no spec;
	// the index's spec holds every file's, as alternatives.
	Detected string `json:"detected_text,omitempty"`
}

// File is the checksum of one file of the index folder. The files a command reads in parts also
// carry the CRC-32C of each Block bytes from the start (the last block may be shorter), 8 hex digits
// each, so that a reader checks what it reads as it reads it rather than every file at open.
type File struct {
	Size   int64  `json:"size"`
	CRC32C string `json:"crc32c"`
	Block  int64  `json:"block,omitempty"`
	Blocks string `json:"block_crc32c,omitempty"`
}

// blockSize is the block a file of the index is checked in, or 0 for a file checked whole at open.
// Files of fixed-size records take whole records a block, so that each block's records are checked
// with it; the others take 1 MiB, which a list or a row's id reads at most once more than it needs.
func blockSize(name string) int64 {
	switch {
	case name == rowsFile:
		return rowRecSize << 15
	case name == dupsFile:
		return dupRecSize << 16
	case name == normsFile, name == lexiconFile, name == postingsFile, name == idsFile,
		strings.HasPrefix(name, stdinPrefix):
		return 1 << 20
	}
	return 0
}

// pathErr words a file system error as "verb path: cause", where os would say "verb open path: cause".
func pathErr(verb string, err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return fmt.Errorf("%s %s: %w", verb, pe.Path, pe.Err)
	}
	return fmt.Errorf("%s: %w", verb, err)
}

// checksumFile sums the file at path whole and, when block is above 0, block by block.
func checksumFile(ctx context.Context, path string, block int64) (File, error) {
	f, err := os.Open(path)
	if err != nil {
		return File{}, err
	}
	defer f.Close()
	h := &blockSummer{block: block}
	n, err := io.Copy(h, jsonl.WithContext(ctx, f))
	if err != nil {
		return File{}, err
	}
	h.flush()
	fl := File{Size: n, CRC32C: fmt.Sprintf("%08x", h.whole)}
	if block > 0 {
		fl.Block, fl.Blocks = block, string(h.blocks)
	}
	return fl, nil
}

// blockSummer is an io.Writer taking the CRC-32C of all it is given and of each block of it.
type blockSummer struct {
	block, in  int64 // in: bytes of the current block so far
	whole, cur uint32
	blocks     []byte // the finished blocks' sums, in hex
}

func (h *blockSummer) Write(p []byte) (int, error) {
	n := len(p)
	h.whole = crc32.Update(h.whole, castagnoli, p)
	for h.block > 0 && len(p) > 0 {
		k := int(min(int64(len(p)), h.block-h.in))
		h.cur = crc32.Update(h.cur, castagnoli, p[:k])
		h.in += int64(k)
		p = p[k:]
		if h.in == h.block {
			h.flush()
		}
	}
	return n, nil
}

// flush ends the current block, when it holds any bytes.
func (h *blockSummer) flush() {
	if h.in > 0 {
		h.blocks = fmt.Appendf(h.blocks, "%08x", h.cur)
		h.cur, h.in = 0, 0
	}
}

// maxMetaBytes bounds the meta.json that Open reads: an index's is a few kilobytes, plus a line for
// each pool file.
const maxMetaBytes = 64 << 20

// readMetaAt reads and checks meta.json in the folder open as d, without looking at the other files.
func readMetaAt(d *os.File, dir string) (*Meta, error) {
	f, err := openAt(d, dir, metaFile)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("open index %s: no %s: %w", dir, metaFile, ErrNotIndex)
		}
		return nil, fmt.Errorf("open index %s: %w", dir, err)
	}
	defer f.Close()
	if fi, err := f.Stat(); err != nil || !fi.Mode().IsRegular() {
		return nil, fmt.Errorf("open index %s: %s is not a regular file: %w", dir, metaFile, ErrNotIndex)
	}
	b, err := io.ReadAll(io.LimitReader(f, maxMetaBytes+1))
	if err != nil {
		return nil, fmt.Errorf("open index %s: %w", dir, err)
	}
	if len(b) > maxMetaBytes {
		return nil, fmt.Errorf("open index %s: %s is over %d bytes: %w", dir, metaFile, maxMetaBytes, ErrDamaged)
	}
	var m Meta
	if err := json.Unmarshal(b, &m); err != nil {
		return nil, fmt.Errorf("open index %s: %s: %v: %w", dir, metaFile, err, ErrDamaged)
	}
	if m.Format != Format {
		return nil, fmt.Errorf("open index %s: format %q: %w", dir, m.Format, ErrNotIndex)
	}
	if m.Version < 1 || m.Version > Version {
		return nil, fmt.Errorf("open index %s: version %d, this sluice reads versions 1 to %d (rebuild the index): %w", dir, m.Version, Version, ErrVersion)
	}
	if m.Version == 1 {
		m.Text = v1Spec(m.Text)
	}
	return &m, nil
}

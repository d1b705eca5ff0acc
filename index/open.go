package index

import (
	"cmp"
	"context"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"sync"
	"sync/atomic"
	"syscall"

	"golang.org/x/sys/unix"

	"sluice/index/analysis"
	"sluice/index/dedup"
	"sluice/index/jsonl"
)

// Index is an opened index folder. Its methods are safe for concurrent use except where noted.
type Index struct {
	dir  string
	real string // dir made absolute with links resolved when opened, where relative sources are found
	meta Meta

	lex lexicon

	postings  []byte   // mapped
	postFile  *os.File // the postings file as mapped, which cursors read through windows of their own
	rowsFile  *os.File // the rows file as mapped, for reads of one record (ReadRowTokens)
	idsFile   *os.File // the ids file as mapped, for reads of one id (AppendRowIDRead)
	window    int      // bytes of a cursor's window (CursorWindow; tests set less)
	piece     int      // rows CopyRows copies from a plain source at a time (copyPiece; tests set less)
	tfStretch int      // rows RowTF reads a call (rowTFStretch; tests set less)
	resident  bool     // small enough to read through the mapping alone and keep (residentMax)
	rows      []byte   // mapped, rowRecSize per row
	norms     []byte   // mapped, a little-endian float64 per row
	dups      []byte   // mapped, dupRecSize bytes per row, when the build found duplicates
	sketches  []byte   // mapped sketches file, when the build wrote one
	contam    []byte   // mapped contaminated.jsonl, when the build checked evaluation files
	idOff     []uint64 // where row i·idStride's length-prefixed id starts in ids, when the index has an id field
	ids       []byte
	stored    map[string][]byte // mapped copies of sources read from a stream, by file name

	maps [][]byte

	set *segSet // the segments, for an index read from a set file; the fields above are then unused

	// The sketches' checksum, checked once, when they are first read (checkSketches).
	sketchOnce sync.Once
	sketchErr  error

	chk     checks                // the files checked a block at a time as they are read
	fault   atomic.Pointer[error] // the first damage found by a read without an error (Err)
	idsOnce sync.Once             // idOffsets, once
	idsErr  error
	idsDone atomic.Bool // idOff is found: ReleaseRows reads it
	lexOnce sync.Once   // lexWalked, once
	lexErr  error
}

// openAttempts bounds how often Open starts again when a rebuild replaced the folder while it read.
const openAttempts = 3

// Open reads an index folder, checking its format version and, for an index built without block
// sums, the checksum of every file (others are checked a block at a time as they are read: see
// Err), or an index-set file (see WriteSet), whose segments it reads as one index: rows in order,
// statistics summed, so that every score is what one index of the same files would give.
//
// Every file is read through one handle on the folder, so one Open sees one version of the index
// even while a rebuild publishes another over it: the rebuild renames the new folder into place and
// leaves the old one whole until it removes it. If the old one is removed before Open has read it
// all, Open starts again on the new one.
func Open(dir string) (*Index, error) {
	if isSetFile(dir) {
		dirs, overlap, err := readSet(dir)
		if err != nil {
			return nil, err
		}
		return openSet(dir, dirs, overlap)
	}
	for attempt := 1; ; attempt++ {
		ix, replaced, err := openOnce(dir)
		if err == nil || !replaced || attempt == openAttempts {
			return ix, err
		}
	}
}

// openOnce opens the folder at dir and reads the index in it. When that fails it also reports
// whether dir has meanwhile come to name another folder, which is worth a second try.
func openOnce(dir string) (ix *Index, replaced bool, err error) {
	d, err := os.Open(dir)
	if err != nil {
		return nil, false, pathErr("open index", err)
	}
	defer d.Close()
	defer func() {
		if err != nil {
			replaced = !sameFile(d, dir)
		}
	}()
	fi, err := d.Stat()
	if err != nil {
		return nil, false, fmt.Errorf("open index %s: %w", dir, err)
	}
	if !fi.IsDir() {
		return nil, false, fmt.Errorf("open index %s: not a folder: %w", dir, ErrNotIndex)
	}
	m, err := readMetaAt(d, dir)
	if err != nil {
		return nil, false, err
	}
	ix = &Index{dir: dir, real: dir, meta: *m}
	if r, err := realPath(dir); err == nil {
		ix.real = r
	}
	if err := ix.load(d); err != nil {
		ix.Close()
		return nil, false, err
	}
	return ix, false, nil
}

// sameFile reports whether the folder open as d is still the one at path.
func sameFile(d *os.File, path string) bool {
	a, err := d.Stat()
	if err != nil {
		return false
	}
	b, err := os.Stat(path)
	return err == nil && os.SameFile(a, b)
}

// openAt opens the file name in the folder open as d.
func openAt(d *os.File, dir, name string) (*os.File, error) {
	// O_NONBLOCK keeps a FIFO put in place of a file from blocking the open; the caller refuses it.
	fd, err := unix.Openat(int(d.Fd()), name, unix.O_RDONLY|unix.O_CLOEXEC|unix.O_NONBLOCK, 0)
	if err != nil {
		return nil, &fs.PathError{Op: "open", Path: filepath.Join(dir, name), Err: err}
	}
	return os.NewFile(uintptr(fd), filepath.Join(dir, name)), nil
}

// load maps and checks the files that meta.json lists. Counts and sizes in meta.json are checked
// against the files before they size or index anything: a damaged meta.json may say anything.
func (ix *Index) load(d *os.File) error {
	dir, m := ix.dir, &ix.meta
	for _, name := range []string{lexiconFile, postingsFile, rowsFile, normsFile, rejectedFile} {
		if _, listed := m.Files[name]; !listed {
			return fmt.Errorf("open index %s: meta.json lists no %s: %w", dir, name, ErrDamaged)
		}
	}
	names := make([]string, 0, len(m.Files))
	for name := range m.Files {
		names = append(names, name)
	}
	sort.Strings(names)
	var read int64
	for _, name := range []string{lexiconFile, postingsFile, rowsFile, normsFile, dupsFile, idsFile} {
		read += max(m.Files[name].Size, 0)
	}
	ix.resident = read <= residentMax
	data := map[string][]byte{}
	buf := make([]byte, checkBuf)
	for _, name := range names {
		want := m.Files[name]
		if filepath.Base(name) != name || name == "." || name == ".." {
			return fmt.Errorf("open index %s: file name %q: %w", dir, name, ErrDamaged)
		}
		// Only a set reads the sketches, once: it checks them then (checkSketches), sparing every
		// other command the largest file of many an index.
		var keep **os.File
		switch name {
		case postingsFile:
			keep = &ix.postFile
		case rowsFile:
			keep = &ix.rowsFile
		case idsFile:
			keep = &ix.idsFile
		}
		// A file with block sums is checked a block at a time as it is read (blocks).
		lazy := want.Block > 0
		b, sum, err := ix.mapFile(d, name, buf, name != sketchesFile && !lazy, keep)
		if err != nil {
			return err
		}
		if int64(len(b)) != want.Size {
			return fmt.Errorf("open index %s: %s is %d bytes, meta.json says %d: %w", dir, name, len(b), want.Size, ErrDamaged)
		}
		if got := fmt.Sprintf("%08x", sum); got != want.CRC32C && name != sketchesFile && !lazy {
			return fmt.Errorf("open index %s: %s checksum %s, meta.json says %s: %w", dir, name, got, want.CRC32C, ErrDamaged)
		}
		if lazy {
			if err := ix.chk.add(ix, name, b); err != nil {
				return err
			}
		}
		data[name] = b
	}
	ix.postings = data[postingsFile]
	ix.rows = data[rowsFile]
	n := m.Rows
	// n is compared by division: n*rowRecSize overflows for a count as large as meta.json may say.
	if n < 0 || n > int64(len(ix.rows))/rowRecSize || int64(len(ix.rows)) != n*rowRecSize {
		return fmt.Errorf("open index %s: rows holds %d bytes for %d rows: %w", dir, len(ix.rows), n, ErrDamaged)
	}
	// What the rows' records are checked against (rowRecs), checked here as they may be checked
	// only when a row is read: a row must have a source, and a plain source a size.
	if n > 0 && len(m.Sources) == 0 {
		return fmt.Errorf("open index %s: %d rows and no source: %w", dir, n, ErrDamaged)
	}
	for i, s := range m.Sources {
		if s.Compression == jsonl.None.String() && s.Size < 0 {
			return fmt.Errorf("open index %s: source %d of %d bytes: %w", dir, i, s.Size, ErrDamaged)
		}
	}
	ix.stored = map[string][]byte{}
	for i, s := range m.Sources {
		if s.Stored == "" {
			continue
		}
		b := data[s.Stored]
		if _, listed := m.Files[s.Stored]; !listed || int64(len(b)) != s.Size {
			return fmt.Errorf("open index %s: source %d is stored as %q, which meta.json does not list at %d bytes: %w", dir, i, s.Stored, s.Size, ErrDamaged)
		}
		ix.stored[s.Stored] = b
	}
	// Every row must name a source the index has, and lie where a source can hold it: rows are
	// trusted from here on, or from when their block is checked.
	if ix.chk.rows != nil {
		ix.chk.rows.records = ix.rowRecs
	} else {
		for i := int64(0); i < n; i += openRelease {
			ix.releaseIn(ix.rows, 0, int(i*rowRecSize))
			if err := ix.rowRecs(int(i*rowRecSize), int(min(i+openRelease, n)*rowRecSize)); err != nil {
				return err
			}
		}
	}
	nb := data[normsFile]
	if int64(len(nb)) != n*8 {
		return fmt.Errorf("open index %s: norms holds %d bytes for %d rows: %w", dir, len(nb), n, ErrDamaged)
	}
	ix.norms = nb
	if err := ix.loadLexicon(data); err != nil {
		return err
	}
	if m.Dups != nil {
		db := data[dupsFile]
		if _, listed := m.Files[dupsFile]; !listed || int64(len(db)) != n*dupRecSize {
			return fmt.Errorf("open index %s: dups holds %d bytes for %d rows: %w", dir, len(db), n, ErrDamaged)
		}
		// Each row's first must be itself or an earlier row that is its own first: the pick trusts it.
		ix.dups = db
		if ix.chk.dups != nil {
			ix.chk.dups.records = ix.dupRecs
		} else {
			for r := int64(0); r < n; r += openRelease {
				ix.releaseIn(db, 0, int(r*dupRecSize))
				if err := ix.dupRecs(int(r*dupRecSize), int(min(r+openRelease, n)*dupRecSize)); err != nil {
					return err
				}
			}
		}
		if sk, listed := m.Files[sketchesFile]; listed {
			// One record for every row that is the first of its key, of a size the settings give.
			size := int64(sketchHead + m.Dups.marksLen())
			if m.Dups.Bands <= 0 || m.Dups.Hashes <= 0 || sk.Size != (n-m.Dups.ExactDuplicates)*size {
				return fmt.Errorf("open index %s: %s holds %d bytes for %d rows first of their key: %w", dir, sketchesFile, sk.Size, n-m.Dups.ExactDuplicates, ErrDamaged)
			}
			ix.sketches = data[sketchesFile]
		}
	}
	if m.Excluded != nil {
		if _, listed := m.Files[contamFile]; !listed {
			return fmt.Errorf("open index %s: meta.json lists no %s: %w", dir, contamFile, ErrDamaged)
		}
		ix.contam = data[contamFile]
	}
	if m.IDField != "" {
		ix.ids = data[idsFile]
		if ix.chk.ids == nil { // else found when an id is first asked (idOffsets)
			if err := ix.idOffsets(); err != nil {
				return err
			}
		}
	}
	// For an index without block sums, the checks above read the rows' records, the clusters, the
	// ids and the lexicon through the mapping: about 100 bytes a row that a pick only needs later,
	// each in a pass of its own. Each pass gives back its pages behind it as well (openRelease), or
	// they would all be resident at once: 2.2 GB at 40 million rows, more than the pick then holds.
	ix.ReleasePages()
	return nil
}

// residentMax is the most bytes of the files a pick reads (all but the sketches) that an index may
// hold to be read through its mapping alone and left resident: below it, giving back pages and
// reading records with pread cost more in faults and calls than they save (a T0 pick 0.35–0.38 s
// with them, 0.30–0.33 without, at 24 MB), and what stays resident is bounded.
const residentMax = 64 << 20

// openRelease is how many rows Open's passes over the rows' records, clusters and ids read between
// giving back the pages behind them.
const openRelease = 1 << 20

// checkBuf is the read buffer Open checksums files through.
const checkBuf = 1 << 20

// mapFile maps the file name of the folder d and returns its CRC-32C (0 unless check), read through buf rather than
// the mapping: read(2) leaves the pages in the page cache but outside the process, so that only
// the parts of the index a command uses become part of its resident memory, where summing the
// mapping made every page of every file resident at open.
func (ix *Index) mapFile(d *os.File, name string, buf []byte, check bool, keep **os.File) ([]byte, uint32, error) {
	f, err := openAt(d, ix.dir, name)
	if err != nil {
		return nil, 0, fmt.Errorf("open index %s: %w: %w", ix.dir, err, ErrDamaged)
	}
	kept := false
	defer func() {
		if !kept {
			f.Close()
		}
	}()
	fi, err := f.Stat()
	if err != nil {
		return nil, 0, fmt.Errorf("open index %s: %w", ix.dir, err)
	}
	if !fi.Mode().IsRegular() {
		return nil, 0, fmt.Errorf("open index %s: %s is not a regular file: %w", ix.dir, name, ErrDamaged)
	}
	if fi.Size() == 0 {
		return nil, 0, nil
	}
	if fi.Size() > math.MaxInt {
		return nil, 0, fmt.Errorf("open index %s: %s too large", ix.dir, name)
	}
	b, err := syscall.Mmap(int(f.Fd()), 0, int(fi.Size()), syscall.PROT_READ, syscall.MAP_SHARED)
	if err != nil {
		return nil, 0, fmt.Errorf("open index %s: map %s: %w", ix.dir, name, err)
	}
	ix.maps = append(ix.maps, b)
	// The same descriptor, so the bytes summed are the bytes mapped; a file that changes under
	// the mapping would fail the same check had it been made through the mapping.
	var sum uint32
	for off := int64(0); check && off < int64(len(b)); {
		k, err := f.ReadAt(buf[:min(int64(len(buf)), int64(len(b))-off)], off)
		sum = crc32.Update(sum, castagnoli, buf[:k])
		off += int64(k)
		if err != nil && off < int64(len(b)) {
			return nil, 0, fmt.Errorf("open index %s: read %s: %w", ix.dir, name, err)
		}
	}
	if keep != nil {
		*keep, kept = f, true
	}
	return b, sum, nil
}

// DupFirst returns the first row of row's cluster of duplicates (row itself when it is alone or
// first), as found when the index was built, and false when the build found none (see Meta.Dups).
func (ix *Index) DupFirst(row int) (int, bool) {
	if ix.set != nil && ix.set.firsts != nil {
		return int(ix.set.firsts[row]), true
	}
	if ix.dups == nil { // a set has none until Duplicates finds them across its segments
		return row, false
	}
	if !ix.need(ix.chk.dups, row*dupRecSize, (row+1)*dupRecSize) {
		return row, true
	}
	return int(binary.LittleEndian.Uint32(ix.dups[row*dupRecSize:])), true
}

// Duplicates says how the index's duplicates were found and what was found (Meta.Dups), and nil
// when the build found none. A set finds them across its segments the first time it is asked, from
// their stored keys and sketches and with no text read, as one build of all their files would
// find them (the same clusters, counts and work; DupFirst then answers from them), and returns nil
// when a segment stored none, found them at other settings, or predates the sketches file; it
// holds what a build's duplicate finder holds, and 4 bytes a row. It stops when ctx is done; the
// first call's context governs, and a stopped search answers every later call with its error.
func (ix *Index) Duplicates(ctx context.Context) (*Dups, error) {
	s := ix.set
	if s == nil {
		return ix.meta.Dups, nil
	}
	if ix.DupSettings() == nil {
		return nil, nil
	}
	s.dupsOnce.Do(func() {
		var d *Dups
		var firsts []uint32
		if d, firsts, s.dupsErr = s.findDups(ctx); s.dupsErr == nil {
			s.dups, s.firsts = d, firsts
		}
	})
	if s.dupsErr != nil {
		return nil, fmt.Errorf("index set %s: %w", ix.dir, s.dupsErr)
	}
	return s.dups, nil
}

// DupSettings says how the index's duplicates were found, without finding a set's (see
// Duplicates): the index's Meta.Dups, a set's first segment's when Duplicates would find them, and
// nil otherwise.
func (ix *Index) DupSettings() *Dups {
	if s := ix.set; s != nil {
		if s.only >= 0 || !s.canReplay() {
			return nil
		}
		return s.segs[0].meta.Dups
	}
	return ix.meta.Dups
}

// DupKey returns row's exact-duplicate key (dedup.Key), and false when the build found no
// duplicates. A set takes it from the row's segment.
func (ix *Index) DupKey(row int) (dedup.Key, bool) {
	var k dedup.Key
	if ix.set != nil {
		g, r, _ := ix.set.seg(row)
		return g.DupKey(r)
	}
	if ix.dups == nil {
		return k, false
	}
	if !ix.need(ix.chk.dups, row*dupRecSize, (row+1)*dupRecSize) {
		return k, true
	}
	copy(k[:], ix.dups[row*dupRecSize+4:])
	return k, true
}

// HasKeys reports whether every row's exact-duplicate key is stored, made by this sluice's
// dedup.Version (DupKey), in the index or in every segment of a set.
func (ix *Index) HasKeys() bool {
	if ix.set != nil {
		for _, g := range ix.set.segs {
			if !g.HasKeys() {
				return false
			}
		}
		return true
	}
	return ix.dups != nil && ix.meta.Dups != nil && ix.meta.Dups.Version == dedup.Version
}

// idStride is how many rows' ids lie between two offsets Open keeps: an offset per row would cost 8
// bytes a pool row, one per 16 costs half a byte, and finding an id then walks past at most 15
// others, each a length and a skip.
const idStride = 16

func (ix *Index) loadIDs(b []byte) error {
	n := ix.meta.Rows
	idOff := make([]uint64, 0, n/idStride+1)
	off := 0
	for i := int64(0); i < n; i++ {
		l, k := binary.Uvarint(b[off:])
		if k <= 0 || uint64(len(b)-off-k) < l {
			return fmt.Errorf("index %s: ids: truncated at row %d: %w", ix.dir, i, ErrDamaged)
		}
		if err := ix.chk.ids.check(off, off+k+int(l)); err != nil {
			return err
		}
		if i%idStride == 0 {
			idOff = append(idOff, uint64(off))
		}
		if i%openRelease == 0 {
			ix.releaseIn(b, 0, off)
		}
		off += k + int(l)
	}
	ix.ids, ix.idOff = b, idOff
	return nil
}

// Close releases the index's mappings.
func (ix *Index) Close() error {
	var err error
	if ix.set != nil {
		for _, g := range ix.set.segs {
			if e := g.Close(); e != nil && err == nil {
				err = e
			}
		}
		return err
	}
	for _, b := range ix.maps {
		if e := syscall.Munmap(b); e != nil && err == nil {
			err = e
		}
	}
	for _, f := range []**os.File{&ix.postFile, &ix.rowsFile, &ix.idsFile} {
		if *f != nil {
			if e := (*f).Close(); e != nil && err == nil {
				err = e
			}
			*f = nil
		}
	}
	ix.maps = nil
	ix.stored = nil
	return err
}

// ReleasePages tells the system that the index's mapped files will not be read again soon: their
// pages leave this process's resident memory (staying in the page cache), which a long pick would
// otherwise hold beside the arrays it makes, each file read in a pass of its own (the postings
// when scoring, the duplicates when guarding, the rows' records when counting tokens). Reading
// afterwards still works, mapping the pages again.
func (ix *Index) ReleasePages() {
	if ix.resident {
		return
	}
	if ix.set != nil {
		for _, g := range ix.set.segs {
			g.ReleasePages()
		}
		return
	}
	for _, b := range ix.maps {
		_ = syscall.Madvise(b, syscall.MADV_DONTNEED) // advice: nothing is lost if refused
	}
}

// ReleaseRows gives back the pages of the rows' records, norms, clusters and ids wholly within
// rows [from, to), which a pass over the rows in order has left behind (see ReleasePages). Pages
// shared with rows outside stay. It may be called from several goroutines at once.
func (ix *Index) ReleaseRows(from, to int) {
	if ix.set != nil || ix.resident {
		return
	}
	from, to = max(from, 0), min(to, ix.NumRows())
	if from >= to {
		return
	}
	ix.releaseIn(ix.rows, from*rowRecSize, to*rowRecSize)
	ix.releaseIn(ix.norms, from*8, to*8)
	ix.releaseIn(ix.dups, from*dupRecSize, to*dupRecSize)
	if ix.idsDone.Load() { // else no id was read, and none is resident
		idAt := func(row int) int { // the first byte of row's id, or the end
			if k := row / idStride; k < len(ix.idOff) {
				return int(ix.idOff[k])
			}
			return len(ix.ids)
		}
		ix.releaseIn(ix.ids, idAt(from), idAt(to))
	}
}

// releaseIn gives back the pages of the mapping b wholly within its bytes [from, to), unless the
// index stays resident: a page shared with bytes outside is kept, as another reader may be on it.
func (ix *Index) releaseIn(b []byte, from, to int) {
	if ix.resident {
		return
	}
	page := os.Getpagesize()
	lo, hi := (from+page-1)/page*page, min(to, len(b))/page*page
	if hi > lo {
		_ = syscall.Madvise(b[lo:hi], syscall.MADV_DONTNEED) // advice: nothing is lost if refused
	}
}

// releaseNorms is how many bytes of a segment's postings an index set's norms pass reads before
// it gives their pages back.
const releaseNorms = 64 << 20

// Meta returns the index's metadata.
func (ix *Index) Meta() Meta { return ix.meta }

// Dir returns the folder the index was opened from.
func (ix *Index) Dir() string { return ix.dir }

// NewAnalyzer returns a fresh analyzer of the kind the index was built with.
func (ix *Index) NewAnalyzer() (*analysis.Analyzer, error) { return analysis.New(ix.meta.Analyzer) }

// NumRows returns the number of indexed rows.
func (ix *Index) NumRows() int {
	if ix.set != nil && ix.set.only >= 0 {
		return int(ix.set.segs[ix.set.only].meta.Rows)
	}
	return int(ix.meta.Rows)
}

// AvgLen returns the mean analysed length of a row.
func (ix *Index) AvgLen() float64 { return ix.meta.AvgLen }

// rec returns row's record, or a zero one when its block fails its check (Err).
func (ix *Index) rec(row int) rowRec {
	if !ix.need(ix.chk.rows, row*rowRecSize, (row+1)*rowRecSize) {
		return rowRec{}
	}
	return getRowRec(ix.rows[row*rowRecSize:])
}

// RowLen returns the analysed length of a row: its number of terms, repeats counted.
func (ix *Index) RowLen(row int) int {
	if ix.set != nil {
		g, r, _ := ix.set.seg(row)
		return g.RowLen(r)
	}
	return int(ix.rec(row).alen)
}

// RowNorm returns the l2 norm of the row's TF-IDF vector, raw tf times ln((1+N)/(1+df))+1.
func (ix *Index) RowNorm(row int) float64 {
	if ix.set != nil {
		return ix.set.rowNorm(row, ix.meta.Rows)
	}
	if !ix.need(ix.chk.norms, 8*row, 8*row+8) {
		return 0
	}
	return math.Float64frombits(binary.LittleEndian.Uint64(ix.norms[8*row:]))
}

// RowTokens returns the row's token count from its count field, or ok=false when the index has
// none, and the UTF-8 bytes of its text for an estimate.
func (ix *Index) RowTokens(row int) (tokens int64, ok bool, textBytes int64) {
	if ix.set != nil {
		g, r, _ := ix.set.seg(row)
		return g.RowTokens(r)
	}
	r := ix.rec(row)
	return int64(r.tokens), r.tokens != noTokens, int64(r.textBytes)
}

// ReadRowTokens is RowTokens read with one pread of the row's record rather than through the
// mapping: for rows asked at random (a budget walk in rank order), whose records would otherwise
// leave nearly every page of the rows file resident.
func (ix *Index) ReadRowTokens(row int) (tokens int64, ok bool, textBytes int64, err error) {
	if ix.set != nil {
		g, r, _ := ix.set.seg(row)
		return g.ReadRowTokens(r)
	}
	if ix.rowsFile == nil || ix.resident {
		t, ok, tb := ix.RowTokens(row)
		return t, ok, tb, nil
	}
	if err := ix.chk.rows.check(row*rowRecSize, (row+1)*rowRecSize); err != nil {
		return 0, false, 0, err
	}
	var b [rowRecSize]byte
	if _, err := ix.rowsFile.ReadAt(b[:], int64(row)*rowRecSize); err != nil {
		return 0, false, 0, fmt.Errorf("index %s: read row %d's record: %w", ix.dir, row, err)
	}
	r := getRowRec(b[:])
	return int64(r.tokens), r.tokens != noTokens, int64(r.textBytes), nil
}

// Location says where a row's bytes stand in its source.
type Location struct {
	Source int    // index into Meta().Sources
	File   string // the path as given when indexing
	Line   int64
	Offset int64 // in the decompressed stream
	Length int64 // bytes including the newline, if it had one
}

// RowLocation returns where the row came from.
func (ix *Index) RowLocation(row int) Location {
	if ix.set != nil {
		g, r, i := ix.set.seg(row)
		loc := g.RowLocation(r)
		loc.Source += ix.set.srcBase[i]
		return loc
	}
	r := ix.rec(row)
	return Location{Source: int(r.src), File: ix.meta.Sources[r.src].Path, Line: int64(r.line), Offset: int64(r.off), Length: int64(r.n)}
}

// AppendRowIDRead is AppendRowID with the id read by one pread near it rather than through the
// mapping: for rows asked at random (those duplicates name), whose ids would otherwise leave nearly
// every page of the ids file resident. An id the read does not hold whole, or a failed read, is
// taken from the mapping.
func (ix *Index) AppendRowIDRead(b []byte, row int) []byte {
	if ix.set != nil {
		g, r, _ := ix.set.seg(row)
		return g.AppendRowIDRead(b, r)
	}
	if ix.meta.IDField == "" || ix.idsFile == nil || ix.resident {
		return ix.AppendRowID(b, row)
	}
	if err := ix.idOffsets(); err != nil {
		ix.fail(err)
		return b
	}
	var win [1024]byte
	n, _ := ix.idsFile.ReadAt(win[:], int64(ix.idOff[row/idStride])) // a short read ends the file
	id := win[:n]
	for i := 0; ; i++ {
		l, k := binary.Uvarint(id)
		if k <= 0 || uint64(len(id)-k) < l {
			return ix.AppendRowID(b, row)
		}
		if i == row%idStride {
			return append(b, id[k:k+int(l)]...)
		}
		id = id[k+int(l):]
	}
}

// RowID returns the row's id: its id field, or file:line.
func (ix *Index) RowID(row int) string {
	return string(ix.AppendRowID(nil, row))
}

// AppendRowID appends the row's id to b, as RowID gives it, without a string to collect for each
// row when all of them are written out.
func (ix *Index) AppendRowID(b []byte, row int) []byte {
	if ix.set != nil {
		g, r, _ := ix.set.seg(row)
		return g.AppendRowID(b, r)
	}
	if ix.meta.IDField != "" {
		if err := ix.idOffsets(); err != nil {
			ix.fail(err)
			return b
		}
		// idOffsets checked every length, so the walk from the nearest kept offset stays in ids.
		id := ix.ids[ix.idOff[row/idStride]:]
		for range row % idStride {
			l, k := binary.Uvarint(id)
			id = id[k+int(l):]
		}
		l, k := binary.Uvarint(id)
		return append(b, id[k:k+int(l)]...)
	}
	r := ix.rec(row)
	b = append(b, ix.meta.Sources[r.src].Path...)
	b = append(b, ':')
	return strconv.AppendUint(b, uint64(r.line), 10)
}

// DF returns the number of rows holding term.
func (ix *Index) DF(term string) int {
	if ix.set != nil {
		df := 0
		for _, g := range ix.set.segs {
			df += g.DF(term)
		}
		return df
	}
	e, ok, err := ix.lex.find(term)
	if err != nil {
		ix.fail(fmt.Errorf("index %s: lexicon: %w", ix.dir, err))
	}
	if !ok {
		return 0
	}
	return int(e.df)
}

// NumTerms returns the size of the lexicon.
func (ix *Index) NumTerms() int { return int(ix.meta.Terms) }

// Postings appends the rows holding term, ascending, and their term frequencies.
func (ix *Index) Postings(term string, rows, tfs []uint32) ([]uint32, []uint32, error) {
	if ix.set != nil {
		return ix.set.postings(term, rows, tfs)
	}
	e, ok, err := ix.lex.find(term)
	if err != nil {
		return rows, tfs, fmt.Errorf("index %s: lexicon: %w", ix.dir, err)
	}
	if !ok {
		return rows, tfs, nil
	}
	c := ix.cursorAt(e, term)
	// df is only a hint here (a damaged list is caught in decoding), but a sane one saves regrowing.
	if df := int(e.df); df <= len(c.b) {
		rows, tfs = slices.Grow(rows, df), slices.Grow(tfs, df)
	}
	return c.Next(math.MaxInt, rows, tfs)
}

// A Cursor reads one term's postings in row order, a stretch at a time, so that a reader of many
// lists need not hold any of them whole.
type Cursor struct {
	ix   *Index
	term string
	b    []byte // what is left of the list, or of the window
	row  int64  // the last row decoded; -1 before the first
	// A cursor that reads through a window: the bytes of the list [off, end) of the postings file
	// are not read yet; b is the unread part of win.
	off, end int64
	win      []byte
	next     int64 // a decoded row not yet handed out (at or past an earlier end), or -1
	tf       uint32

	parts []*Cursor // for a set, a cursor on each segment, read in turn
	part  int       // the segment being read

	err error // the list failed its check (cursorAt)
}

// NewCursor returns a cursor at the start of term's postings; a term the index lacks has none.
func (ix *Index) NewCursor(term string) *Cursor {
	if ix.set != nil {
		return ix.set.cursor(ix, term)
	}
	e, ok, err := ix.lex.find(term)
	switch {
	case err != nil:
		return &Cursor{ix: ix, term: term, row: -1, next: -1, err: fmt.Errorf("index %s: lexicon: %w", ix.dir, err)}
	case !ok:
		return &Cursor{ix: ix, term: term, row: -1, next: -1}
	case ix.postFile == nil || ix.resident:
		c := ix.cursorAt(e, term)
		return &c
	}
	// Read through a window of its own, not the mapping: a pick reads thousands of lists side by
	// side, and the mapped pages around every list's place (the system maps a file's cached pages
	// in blocks of up to some hundred kilobytes) made nearly all the postings resident at once.
	return &Cursor{ix: ix, term: term, off: int64(e.post), end: int64(e.postEnd), row: -1, next: -1}
}

// cursorAt returns a cursor reading term's list, whose entry is e, through the mapping; one whose
// list fails its check gives the error at its first Next.
func (ix *Index) cursorAt(e termEntry, term string) Cursor {
	if err := ix.chk.post.check(int(e.post), int(e.postEnd)); err != nil {
		return Cursor{ix: ix, term: term, row: -1, next: -1, err: err}
	}
	return Cursor{ix: ix, term: term, b: ix.postings[e.post:e.postEnd], row: -1, next: -1}
}

// CursorWindow is the most bytes of its list a cursor holds: a pick's thousands of cursors hold
// a few megabytes between them, and a list is read in one pread per window.
const CursorWindow = 4 << 10

// refill moves what is left of the window to its front and reads as much more of the list as fits.
func (c *Cursor) refill() error {
	if c.win == nil { // the first read: nothing is left over
		size := c.ix.window
		if size == 0 {
			size = CursorWindow
		}
		// Never under two varints, which Next needs whole; never over the list.
		c.win = make([]byte, int(min(int64(max(size, 2*binary.MaxVarintLen64)), c.end-c.off)))
	}
	n := copy(c.win, c.b)
	if err := c.ix.chk.post.check(int(c.off), int(c.off+min(int64(len(c.win)-n), c.end-c.off))); err != nil {
		return err
	}
	k, err := c.ix.postFile.ReadAt(c.win[n:n+int(min(int64(len(c.win)-n), c.end-c.off))], c.off)
	c.off += int64(k)
	c.b = c.win[:n+k]
	if err != nil && k == 0 {
		return fmt.Errorf("index %s: read postings of %q: %w", c.ix.dir, c.term, err)
	}
	return nil
}

// Next appends the postings of rows below end that earlier calls have not handed out to rows and
// tfs (rows ascending, with term frequencies) and returns them.
func (c *Cursor) Next(end int, rows, tfs []uint32) ([]uint32, []uint32, error) {
	if c.parts != nil {
		return c.nextParts(end, rows, tfs)
	}
	if c.err != nil {
		return rows, tfs, c.err
	}
	if c.next >= 0 {
		if c.next >= int64(end) {
			return rows, tfs, nil
		}
		rows, tfs = append(rows, uint32(c.next)), append(tfs, c.tf)
		c.next = -1
	}
	b, row, n := c.b, c.row, c.ix.meta.Rows
	for {
		// A posting takes at most two varints; one cut by the window's end is read again whole.
		if len(b) < 2*binary.MaxVarintLen64 && c.off < c.end {
			c.b = b
			if err := c.refill(); err != nil {
				return rows, tfs, err
			}
			b = c.b
		}
		if len(b) == 0 {
			break
		}
		// Most gaps and counts take one byte; binary.Uvarint handles the rest.
		v, k := uint64(b[0]), 1
		if v >= 0x80 {
			if v, k = binary.Uvarint(b); k <= 0 {
				return rows, tfs, fmt.Errorf("index %s: postings of %q: %w", c.ix.dir, c.term, ErrDamaged)
			}
		}
		b = b[k:]
		tf := uint64(1)
		if v&1 == 0 {
			if len(b) > 0 && b[0] < 0x80 {
				tf, k = uint64(b[0]), 1
			} else if tf, k = binary.Uvarint(b); k <= 0 {
				return rows, tfs, fmt.Errorf("index %s: postings of %q: %w", c.ix.dir, c.term, ErrDamaged)
			}
			b = b[k:]
		}
		row += int64(v >> 1)
		// A damaged gap can carry row past the largest int64 to a negative number, which unsigned
		// is as large as any: one comparison catches both.
		if uint64(row) >= uint64(n) {
			return rows, tfs, fmt.Errorf("index %s: postings of %q: row %d of %d: %w", c.ix.dir, c.term, row, n, ErrDamaged)
		}
		if row >= int64(end) {
			c.next, c.tf = row, uint32(tf)
			break
		}
		rows = append(rows, uint32(row))
		tfs = append(tfs, uint32(tf))
	}
	c.b, c.row = b, row
	return rows, tfs, nil
}

// RowTF returns row's frequency of term, 0 when the row lacks it, reading the term's list only as
// far as the row, and holding a stretch of it at a time: what explaining one row needs of a list.
func (ix *Index) RowTF(term string, row int) (int, error) {
	c := ix.NewCursor(term)
	var rows, tfs []uint32
	for end := 0; end <= row; {
		end = min(end+cmp.Or(ix.tfStretch, rowTFStretch), row+1)
		var err error
		if rows, tfs, err = c.Next(end, rows[:0], tfs[:0]); err != nil {
			return 0, err
		}
	}
	if len(rows) > 0 && rows[len(rows)-1] == uint32(row) {
		return int(tfs[len(tfs)-1]), nil
	}
	return 0, nil
}

// rowTFStretch is how many rows' postings RowTF decodes a call.
const rowTFStretch = 1 << 16

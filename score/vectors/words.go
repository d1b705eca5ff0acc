package vectors

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strconv"

	"sluice/index/jsonl"
)

// WordVectors is a table of static word vectors read from the common text
// format: a header line "count dim", then count lines "word v1 v2 … vdim",
// fields separated by spaces (a trailing space and a "\r" before the
// newline are allowed). The whole table is held in memory, it being the
// model: 4·dim bytes per word for its vector, plus the word itself and
// about 40 bytes for its entry in a Go map (Bytes gives the total).
type WordVectors struct {
	dim       int
	index     map[string]int32
	data      []float32
	wordBytes int64
}

// maxWords caps the words of a table, whose rows are indexed by int32.
const maxWords = math.MaxInt32

// LoadWordVectors reads the word-vector text file at path, which may be
// gzip or zstd compressed.
func LoadWordVectors(path string) (*WordVectors, error) {
	r, c, err := jsonl.Open(path)
	if err != nil {
		return nil, fmt.Errorf("read word vectors: %w", err)
	}
	defer r.Close()
	size := int64(-1)
	if st, err := os.Stat(path); err == nil && st.Mode().IsRegular() && c == jsonl.None {
		size = st.Size()
	}
	return ReadWordVectors(r, path, size)
}

// ReadWordVectors reads a word-vector table from r, named name in errors.
// size is the stream's length when known, else -1; it bounds what the
// header's count can make ReadWordVectors allocate.
func ReadWordVectors(r io.Reader, name string, size int64) (*WordVectors, error) {
	sc := jsonl.NewScanner(r, 0)
	fail := func(format string, a ...any) error {
		return fmt.Errorf("read %s:%d: %w", name, sc.Line(), fmt.Errorf(format, a...))
	}
	if !sc.Scan() {
		if err := sc.Err(); err != nil {
			return nil, fmt.Errorf("read %s: %w", name, err)
		}
		return nil, fmt.Errorf("read %s: empty, want a header line \"count dim\": %w", name, ErrFormat)
	}
	if sc.TooLong() {
		return nil, fail("header line longer than %d bytes: %w", jsonl.DefaultMaxLine, ErrFormat)
	}
	count, dim, err := wordHeader(sc.Bytes())
	if err != nil {
		return nil, fail("header %q: %w", clip(sc.Bytes()), err)
	}
	// The shortest line is a one-byte word, then a space and a digit per
	// value, then a newline.
	if size >= 0 && count > (size-int64(sc.Len()))/(2*int64(dim)+2) {
		return nil, fail("header says %d words of %d values, more than a file of %d bytes can hold: %w", count, dim, size, ErrTruncated)
	}
	w := &WordVectors{dim: dim}
	prealloc := count
	if size < 0 {
		prealloc = min(count, max(1, (1<<20)/int64(dim)))
	}
	w.data = make([]float32, 0, prealloc*int64(dim))
	w.index = make(map[string]int32, min(prealloc, 1<<20))
	for sc.Scan() {
		if sc.TooLong() {
			return nil, fail("line longer than %d bytes: %w", jsonl.DefaultMaxLine, ErrFormat)
		}
		if int64(len(w.index)) == count {
			if len(bytes.TrimSpace(sc.Bytes())) == 0 {
				continue // blank lines at the end
			}
			return nil, fail("more than the %d words the header gives: %w", count, ErrFormat)
		}
		word, vals, ok := bytes.Cut(sc.Bytes(), []byte{' '})
		if len(word) == 0 || !ok {
			return nil, fail("want \"word v1 … v%d\": %w", dim, ErrFormat)
		}
		if at, dup := w.index[string(word)]; dup {
			// Word i is on line i+2: the header is line 1 and no line is skipped.
			return nil, fail("word %q repeats line %d: %w", word, int64(at)+2, ErrDuplicate)
		}
		row := len(w.data)
		w.data = slices.Grow(w.data, dim)[:row+dim]
		if err := parseValues(w.data[row:], vals); err != nil {
			return nil, fail("word %q: %w", word, err)
		}
		w.index[string(word)] = int32(len(w.index))
		w.wordBytes += int64(len(word))
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("read %s: %w", name, err)
	}
	if int64(len(w.index)) < count {
		return nil, fmt.Errorf("read %s: %d words, the header gives %d: %w", name, len(w.index), count, ErrTruncated)
	}
	return w, nil
}

// wordHeader parses "count dim".
func wordHeader(b []byte) (count int64, dim int, err error) {
	f := bytes.Fields(b)
	if len(f) != 2 {
		return 0, 0, fmt.Errorf("want two numbers \"count dim\": %w", ErrFormat)
	}
	count, err1 := strconv.ParseInt(string(f[0]), 10, 64)
	d, err2 := strconv.ParseInt(string(f[1]), 10, 64)
	if err1 != nil || err2 != nil || count < 1 || count > maxWords || d < 1 || d > MaxDim {
		return 0, 0, fmt.Errorf("want 1 to %d words of 1 to %d values: %w", maxWords, MaxDim, ErrFormat)
	}
	return count, int(d), nil
}

// parseValues parses exactly len(dst) space-separated numbers.
func parseValues(dst []float32, b []byte) error {
	b = bytes.TrimRight(b, " \r")
	k := 0
	for len(b) > 0 {
		var field []byte
		field, b, _ = bytes.Cut(b, []byte{' '})
		if len(field) == 0 {
			continue // two spaces in a row
		}
		if k == len(dst) {
			return fmt.Errorf("more than %d values: %w", len(dst), ErrLength)
		}
		f, err := strconv.ParseFloat(string(field), 32)
		if err != nil && !math.IsInf(f, 0) {
			return fmt.Errorf("value %d %q: %w", k+1, clip(field), ErrFormat)
		}
		if math.IsInf(f, 0) || math.IsNaN(f) {
			return fmt.Errorf("value %d %q: %w", k+1, clip(field), ErrNotFinite)
		}
		dst[k] = float32(f)
		k++
	}
	if k != len(dst) {
		return fmt.Errorf("%d values, the header gives %d: %w", k, len(dst), ErrLength)
	}
	return nil
}

// clip shortens b for an error message.
func clip(b []byte) string {
	if len(b) > 40 {
		return string(b[:40]) + "…"
	}
	return string(b)
}

// Dim returns the vector length.
func (w *WordVectors) Dim() int { return w.dim }

// Len returns the number of words.
func (w *WordVectors) Len() int { return len(w.index) }

// Bytes estimates the memory the table holds: 4·dim per word for the
// vectors, the words' bytes, and 40 per word for the map's string header,
// row number and share of buckets (an estimate of Go's map layout).
func (w *WordVectors) Bytes() int64 {
	return 4*int64(len(w.data)) + w.wordBytes + 40*int64(len(w.index))
}

// Lookup returns the vector of word, sharing the table's memory, and
// whether the table has the word. Words are compared byte for byte: fold
// case or normalise before, as the table's maker did.
func (w *WordVectors) Lookup(word string) ([]float32, bool) {
	i, ok := w.index[word]
	if !ok {
		return nil, false
	}
	return w.data[int(i)*w.dim : (int(i)+1)*w.dim], true
}

// Mean writes into dst, of length Dim, the mean of the vectors of the words
// the table has, and returns how many of words it has. A word that repeats
// counts each time. With weight not nil the mean is weighted:
// Σ weight(word)·vector / Σ weight(word), summed in float64 in word order
// and rounded to float32 at the end; a weight must be finite and not
// negative. When no word is known, or the weights of those known sum to 0,
// dst is the zero vector: the caller decides what such a row gets.
//
// Its work is len(words) word lookups and known·Dim multiply-adds.
func (w *WordVectors) Mean(dst []float32, words []string, weight func(word string) float64) (known int, err error) {
	return w.mean(dst, make([]float64, w.dim), words, weight)
}

func (w *WordVectors) mean(dst []float32, acc []float64, words []string, weight func(string) float64) (int, error) {
	if len(dst) != w.dim {
		return 0, fmt.Errorf("mean of word vectors: room for %d values, want %d", len(dst), w.dim)
	}
	clear(acc)
	known, total := 0, 0.0
	for _, word := range words {
		v, ok := w.Lookup(word)
		if !ok {
			continue
		}
		known++
		wt := 1.0
		if weight != nil {
			wt = weight(word)
			if !(wt >= 0) || math.IsInf(wt, 0) {
				return 0, fmt.Errorf("mean of word vectors: word %q has weight %v, want finite and not negative: %w", word, wt, ErrNotFinite)
			}
			for k, x := range v {
				// The conversion rounds the product, so that no machine
				// fuses it into the add: the sum is the same everywhere.
				acc[k] += float64(wt * float64(x))
			}
		} else {
			for k, x := range v {
				acc[k] += float64(x)
			}
		}
		total += wt
	}
	if total == 0 {
		clear(dst)
		return known, nil
	}
	for k := range dst {
		dst[k] = float32(acc[k] / total)
	}
	return known, nil
}

// WordSource embeds rows of words as the means of their word vectors (see
// Mean), one row per call of its next function. It implements Source.
type WordSource struct {
	w        *WordVectors
	next     func() ([]string, error)
	weight   func(string) float64
	acc      []float64
	row      int
	work     Work
	noWords  int
	firstNon []int
}

// Source returns a WordSource over the rows next gives; next returns
// io.EOF after the last row. weight, if not nil, weights each word (an idf,
// say).
func (w *WordVectors) Source(next func() ([]string, error), weight func(word string) float64) *WordSource {
	return &WordSource{w: w, next: next, weight: weight, acc: make([]float64, w.dim)}
}

// Dim returns the vector length.
func (s *WordSource) Dim() int { return s.w.dim }

// Read embeds the next rows into dst, at most len(dst)/Dim() of them.
func (s *WordSource) Read(dst []float32) (int, error) {
	dim := s.w.dim
	want := len(dst) / dim
	if want == 0 {
		return 0, fmt.Errorf("embed rows: room for %d values, a row has %d", len(dst), dim)
	}
	for n := 0; n < want; n++ {
		words, err := s.next()
		if err == io.EOF {
			if n == 0 {
				return 0, io.EOF
			}
			return n, nil
		}
		if err != nil {
			return 0, fmt.Errorf("embed row %d: %w", s.row, err)
		}
		known, err := s.w.mean(dst[n*dim:(n+1)*dim], s.acc, words, s.weight)
		if err != nil {
			return 0, fmt.Errorf("embed row %d: %w", s.row, err)
		}
		s.work.WordLookups += int64(len(words))
		s.work.MultiplyAdds += int64(known) * int64(dim)
		if known == 0 {
			s.noWords++
			if len(s.firstNon) < 10 {
				s.firstNon = append(s.firstNon, s.row)
			}
		}
		s.row++
	}
	return want, nil
}

// Work returns the work done so far.
func (s *WordSource) Work() Work { return s.work }

// NoWords returns how many rows so far had no word in the table (their
// vector is zero) and the first ten of them, 0-based.
func (s *WordSource) NoWords() (count int, first []int) { return s.noWords, s.firstNon }

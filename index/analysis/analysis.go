package analysis

import (
	"encoding/binary"
	"errors"
	"fmt"
	"strings"
	"unicode/utf8"

	bleveanalysis "github.com/blevesearch/bleve/v2/analysis"
	"github.com/blevesearch/bleve/v2/analysis/analyzer/custom"
	"github.com/blevesearch/bleve/v2/analysis/lang/en"
	"github.com/blevesearch/bleve/v2/analysis/token/lowercase"
	"github.com/blevesearch/bleve/v2/analysis/tokenizer/unicode"
	"github.com/blevesearch/bleve/v2/registry"
	porterstemmer "github.com/blevesearch/go-porterstemmer"
)

// ErrUnknownAnalyzer is returned by New for a name not listed by Names.
var ErrUnknownAnalyzer = errors.New("unknown analyzer")

// Default is the name of the analyzer used when none is chosen.
const Default = "english"

const (
	english = "english"
	plain   = "plain"
)

// Names returns the names accepted by New, the default first.
func Names() []string { return []string{english, plain} }

// An Analyzer turns text into index terms. It keeps scratch buffers and a
// stem cache, so it is not safe for concurrent use: use one per goroutine.
type Analyzer struct {
	name     string
	describe string
	bleve    bleveanalysis.Analyzer
	stem     bool // possessive, stop words and stemming (english)

	stop bleveanalysis.TokenMap
	// hot and cache remember what the english chain makes of a word, in
	// bounded memory (see cache.go): under 5 MB.
	hot    []hotEntry
	hotTag []uint64 // the caller's tag for each hot entry (see EachTagged)
	cache  *stemCache
	noTag  uint64 // handed out for terms outside the hot level, zeroed before each use

	term     []byte // the current term, lowercased
	runes    []rune // stemmer input
	stemBuf  []byte // stemmer output
	bleveBuf []byte // text handed to bleve, which lowercases in place
}

// New returns the analyzer called name (see Names).
func New(name string) (*Analyzer, error) {
	cache := registry.NewCache()
	a := &Analyzer{name: name}
	var err error
	switch name {
	case english:
		a.describe = "unicode words; possessive 's removed; lowercase; English stop words (bleve stop_en); Porter stemmer (bleve porter)"
		a.stem = true
		if a.bleve, err = cache.AnalyzerNamed(en.AnalyzerName); err != nil {
			return nil, fmt.Errorf("analyzer %s: %w", name, err)
		}
		if a.stop, err = cache.TokenMapNamed(en.StopName); err != nil {
			return nil, fmt.Errorf("analyzer %s: %w", name, err)
		}
		a.cache = newStemCache()
		a.hot = make([]hotEntry, 1<<hotBits)
		a.hotTag = make([]uint64, 1<<hotBits)
	case plain:
		a.describe = "unicode words; lowercase"
		a.bleve, err = cache.DefineAnalyzer(plain, map[string]interface{}{
			"type":          custom.Name,
			"tokenizer":     unicode.Name,
			"token_filters": []string{lowercase.Name},
		})
		if err != nil {
			return nil, fmt.Errorf("analyzer %s: %w", name, err)
		}
	default:
		return nil, fmt.Errorf("analyzer %q: %w (known: %s)", name, ErrUnknownAnalyzer, strings.Join(Names(), ", "))
	}
	return a, nil
}

// Name returns the name the analyzer was made with.
func (a *Analyzer) Name() string { return a.name }

// Describe returns the analyzer chain in words, for index metadata.
func (a *Analyzer) Describe() string { return a.describe }

// Terms returns the terms of text in order.
func (a *Analyzer) Terms(text []byte) []string {
	var terms []string
	a.Each(text, func(term []byte) { terms = append(terms, string(term)) })
	return terms
}

// Each calls fn with every term of text, in order. The terms are exactly
// those of bleve's analyzer chain. term is only valid during the call and
// must not be modified. text is not modified.
//
// Text made of ASCII runs is analyzed by hand; the stretches around
// non-ASCII bytes, cut where bleve's tokenizer is bound to start a new
// segment, go to bleve's analyzer, and so does all of a text that is not
// valid UTF-8, where bleve's tokenizer can stop before the end.
func (a *Analyzer) Each(text []byte, fn func(term []byte)) {
	a.EachTagged(text, func(term []byte, _ *uint64) { fn(term) })
}

// EachTagged is Each, and also hands fn a tag: a word of memory that stays with the term while the
// analyzer's caches hold it. A caller can keep there what it made of the
// term, an id say, and skip its own lookup the next time the term comes. A tag is zero when new, and
// is zeroed when its entry moves to another word; terms outside the caches get a tag that is zero on
// every call. A caller that starts over must be able to tell its old tags from its new ones, for
// example by keeping a generation number in them.
func (a *Analyzer) EachTagged(text []byte, fn func(term []byte, tag *uint64)) {
	pos := 0
	for pos < len(text) {
		j := pos + asciiPrefix(text[pos:])
		if j == len(text) {
			a.eachASCII(text[pos:], fn)
			return
		}
		if pos == 0 && !utf8.Valid(text[j:]) {
			a.bleveEach(text, fn)
			return
		}
		k := j
		for k > pos && !cutBefore(text, k) {
			k--
		}
		a.eachASCII(text[pos:k], fn)
		end := j + 1
		for end < len(text) && !cutBefore(text, end) {
			end++
		}
		a.bleveEach(text[k:end], fn)
		pos = end
	}
}

// bleveEach runs bleve's analyzer on a copy of text: its lowercase filter
// writes into the input.
func (a *Analyzer) bleveEach(text []byte, fn func(term []byte, tag *uint64)) {
	if len(text) == 0 {
		return
	}
	a.bleveBuf = append(a.bleveBuf[:0], text...)
	for _, tok := range a.bleve.Analyze(a.bleveBuf) {
		a.noTag = 0
		fn(tok.Term, &a.noTag)
	}
}

// eachASCII analyzes text that is all ASCII and starts and ends where
// bleve's tokenizer starts a segment.
func (a *Analyzer) eachASCII(text []byte, fn func(term []byte, tag *uint64)) {
	if len(a.term) < len(text)+pad {
		a.term = make([]byte, len(text)+pad)
	}
	t := a.term
	for i := 0; i < len(text); {
		if classes[text[i]] > cWord {
			i++
			continue
		}
		var n int
		i, n = scanWord(text, i, t)
		if !a.stem {
			a.noTag = 0
			fn(t[:n:n], &a.noTag)
			continue
		}
		// bleve possessive_en strips a trailing 's or 'S before lowercasing.
		if n >= 2 && t[n-1] == 's' && t[n-2] == '\'' {
			n -= 2
		}
		a.emitStemmed(t, n, fn)
	}
}

// emitStemmed runs the lowercased ASCII word t[:n] through bleve's stop_en
// and porter filters, and passes on what is left. t has room for pad bytes
// after the word.
func (a *Analyzer) emitStemmed(t []byte, n int, fn func(term []byte, tag *uint64)) {
	binary.LittleEndian.PutUint64(t[n:], 0)
	binary.LittleEndian.PutUint64(t[n+8:], 0)
	h := hashPadded(t, n)
	var e *hotEntry
	hi := h >> (64 - hotBits)
	if n <= hotMax {
		w0, w1 := binary.LittleEndian.Uint64(t), binary.LittleEndian.Uint64(t[8:])
		e = &a.hot[hi]
		if e.k0 == w0 && e.k1 == w1 {
			if e.s0 == 0 {
				return
			}
			binary.LittleEndian.PutUint64(t, e.s0)
			binary.LittleEndian.PutUint64(t[8:], e.s1)
			m := paddedLen(e.s0, e.s1)
			fn(t[:m:m], &a.hotTag[hi])
			return
		}
	}
	w := t[:n]
	var stem []byte
	var stop bool
	tag := &a.noTag
	a.noTag = 0
	if n > cacheMaxKey {
		stem, stop = a.analyzeWord(w)
	} else {
		var ok bool
		var slot int
		stem, stop, ok, slot = a.cache.lookup(w, uint32(h))
		if !ok {
			stem, stop = a.analyzeWord(w)
			slot = a.cache.insert(slot, w, uint32(h), stem, stop)
			// A word seen once is likely never seen again: keep it out
			// of the hot level.
			e = nil
		}
		tag = &a.cache.tags[slot]
	}
	if e != nil && (stop || len(stem) > 0 && len(stem) <= hotMax) {
		var b [16]byte
		copy(b[:], stem)
		e.k0, e.k1 = binary.LittleEndian.Uint64(t), binary.LittleEndian.Uint64(t[8:])
		e.s0, e.s1 = binary.LittleEndian.Uint64(b[:]), binary.LittleEndian.Uint64(b[8:])
		a.hotTag[hi] = *tag
		tag = &a.hotTag[hi]
	}
	if !stop {
		// A copy, so that fn cannot reach the caches.
		t = append(t[:0], stem...)
		fn(t[:len(t):len(t)], tag)
	}
}

// analyzeWord applies bleve's stop_en and porter filters to a lowercased
// ASCII word. The stem is only valid until the next call.
func (a *Analyzer) analyzeWord(w []byte) (stem []byte, stop bool) {
	if _, stop := a.stop[string(w)]; stop {
		return nil, true
	}
	r := a.runes[:0]
	for _, c := range w {
		r = append(r, rune(c))
	}
	a.runes = r
	s := porterstemmer.StemWithoutLowerCasing(r)
	b := a.stemBuf[:0]
	for _, c := range s {
		b = utf8.AppendRune(b, c)
	}
	a.stemBuf = b
	return b, false
}

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

const (
	english       = "english"
	plain         = "plain"
	englishNoStem = "english-nostem"
	sklearn       = "sklearn"
)

// Names returns the names accepted by New, the default first.
func Names() []string { return []string{english, plain, englishNoStem, sklearn} }

// An Analyzer turns text into index terms. It keeps scratch buffers and a
// stem cache, so it is not safe for concurrent use: use one per goroutine.
type Analyzer struct {
	name     string
	describe string
	bleve    bleveanalysis.Analyzer
	english  bool // possessive, stop words and the word caches (english, english-nostem)
	porter   bool // Porter stemming after the stop words (english)
	sklearn  bool // scikit-learn's tokenisation instead of bleve's (see sklearn.go)

	stop bleveanalysis.TokenMap
	// hot and cache remember what the english chains make of a word, in
	// bounded memory (see cache.go): under 6 MB.
	hot   []hotSet
	cache *stemCache
	noTag uint64 // handed out for terms outside the hot level, zeroed before each use

	buf      []byte // the text being analyzed, lowercased where ASCII
	term     []byte // the current stem, at least 16 bytes long
	runes    []rune // stemmer input
	stemBuf  []byte // stemmer output
	bleveBuf []byte // text handed to bleve, which lowercases in place
}

// New returns the analyzer called name (see Names).
func New(name string) (*Analyzer, error) {
	cache := registry.NewCache()
	a := &Analyzer{name: name, term: make([]byte, 0, 64)}
	var err error
	switch name {
	case english:
		a.describe = "unicode words; possessive 's removed; lowercase; English stop words (bleve stop_en); Porter stemmer (bleve porter)"
		a.english, a.porter = true, true
		if a.bleve, err = cache.AnalyzerNamed(en.AnalyzerName); err != nil {
			return nil, fmt.Errorf("analyzer %s: %w", name, err)
		}
		if a.stop, err = cache.TokenMapNamed(en.StopName); err != nil {
			return nil, fmt.Errorf("analyzer %s: %w", name, err)
		}
		a.cache = newStemCache()
		a.hot = make([]hotSet, 1<<hotBits)
	case englishNoStem:
		// english without its last filter: stemming merges words that
		// tell tasks apart ("classify", "classes", "class"), and
		// measured selection quality is higher without it on some
		// corpora (testdata/bench/quality.sh).
		a.describe = "unicode words; possessive 's removed; lowercase; English stop words (bleve stop_en); no stemming"
		a.english = true
		a.bleve, err = cache.DefineAnalyzer(englishNoStem, map[string]interface{}{
			"type":          custom.Name,
			"tokenizer":     unicode.Name,
			"token_filters": []string{en.PossessiveName, lowercase.Name, en.StopName},
		})
		if err != nil {
			return nil, fmt.Errorf("analyzer %s: %w", name, err)
		}
		if a.stop, err = cache.TokenMapNamed(en.StopName); err != nil {
			return nil, fmt.Errorf("analyzer %s: %w", name, err)
		}
		a.cache = newStemCache()
		a.hot = make([]hotSet, 1<<hotBits)
	case sklearn:
		a.describe = "scikit-learn CountVectorizer default: Python str.lower(); tokens of 2+ word characters, " +
			"token_pattern (?u)\\b\\w\\w+\\b; scikit-learn ENGLISH_STOP_WORDS; no stemming"
		a.sklearn = true
		a.stop = make(bleveanalysis.TokenMap, 320)
		for _, w := range strings.Fields(sklearnStopWords) {
			a.stop[w] = true
		}
		a.cache = newStemCache()
		a.hot = make([]hotSet, 1<<hotBits)
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
	if len(a.buf) < len(text)+pad {
		a.buf = make([]byte, len(text)+pad)
	}
	if a.sklearn {
		a.sklearnEach(text, fn)
		return
	}
	pos := 0
	for pos < len(text) {
		n := copyLower(a.buf, text[pos:])
		j := pos + n
		if j == len(text) {
			a.eachASCII(n, fn)
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
		a.eachASCII(k-pos, fn)
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

// eachASCII analyzes the first size bytes of a.buf: lowercased ASCII that
// ends where bleve's tokenizer starts a segment.
func (a *Analyzer) eachASCII(size int, fn func(term []byte, tag *uint64)) {
	b := a.buf[:size+pad]
	clear(b[size:])
	s := newWordScanner(b, size)
	for {
		start, end, ok := s.next()
		if !ok {
			return
		}
		if !a.english {
			a.noTag = 0
			fn(b[start:end:end], &a.noTag)
			continue
		}
		// bleve possessive_en strips a trailing 's or 'S before lowercasing.
		n := end - start
		if n >= 2 && binary.LittleEndian.Uint16(b[end-2:]) == 's'<<8|'\'' {
			n -= 2
		}
		a.emitWord(b, start, n, fn)
	}
}

// emitWord passes on what the chain makes of the lowercased ASCII word
// b[start:start+n], looking it up in the caches first. b holds at least
// 16 bytes from start.
func (a *Analyzer) emitWord(b []byte, start, n int, fn func(term []byte, tag *uint64)) {
	if n > hotMax {
		a.emitStemmed(b[start:start+n], hashLong(b[start:], n), nil, 0, 0, fn)
		return
	}
	// The hot level, on the way of most terms: the word is held
	// zero-padded in two registers, hashed and compared without
	// going through memory. b has pad bytes after the word.
	p := (*[16]byte)(b[start:])
	w0 := binary.LittleEndian.Uint64(p[:8]) & lowBytes(min(n, 8))
	w1 := binary.LittleEndian.Uint64(p[8:]) & lowBytes(max(n-8, 0))
	h := hash16(w0, w1)
	set := &a.hot[h>>(64-hotBits)]
	e := &set[0]
	if e.k0 != w0 || e.k1 != w1 {
		e = &set[1]
	}
	if e.k0 != w0 || e.k1 != w1 {
		a.emitStemmed(b[start:start+n], h, set, w0, w1, fn)
		return
	}
	if e.stem == 0 { // a stop word
		return
	}
	t := a.term[:16]
	var m int
	if e.stem&longStem == 0 {
		binary.LittleEndian.PutUint64(t, e.stem)
		m = paddedLen(e.stem)
	} else {
		binary.LittleEndian.PutUint64(t, w0)
		binary.LittleEndian.PutUint64(t[8:], e.stem&^longStem)
		m = 8 + paddedLen(e.stem&^longStem)
	}
	fn(t[:m:m], &e.tag)
}

// emitStemmed runs the lowercased ASCII word w, with hash h, through
// the chain's stop list and, for english, bleve's porter filter, and
// passes on what is left. set is
// the hot set for w, which is not in it, held in w0, w1; nil if w is too
// long for the hot level.
func (a *Analyzer) emitStemmed(w []byte, h uint64, set *hotSet, w0, w1 uint64, fn func(term []byte, tag *uint64)) {
	var stem []byte
	var stop bool
	tag := &a.noTag
	a.noTag = 0
	if len(w) > cacheMaxKey {
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
			set = nil
		}
		tag = &a.cache.slots[slot].tag
	}
	if set != nil && (stop || len(stem) > 0) {
		if s, ok := hotStem(w, stem); ok {
			// The newest word takes the first way, and the one it
			// held the second: a word used again soon after it came
			// stays.
			set[1] = set[0]
			set[0] = hotEntry{k0: w0, k1: w1, stem: s, tag: *tag}
			tag = &set[0].tag
		}
	}
	if !stop {
		// A copy, so that fn cannot reach the caches.
		t := append(a.term[:0], stem...)
		a.term = t
		fn(t[:len(t):len(t)], tag)
	}
}

// analyzeWord applies the chain's stop list and, for english, bleve's
// porter filter to a lowercased ASCII word. The stem is only valid until
// the next call.
func (a *Analyzer) analyzeWord(w []byte) (stem []byte, stop bool) {
	if _, stop := a.stop[string(w)]; stop {
		return nil, true
	}
	if !a.porter {
		return w, false
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

package tokens

import "errors"

var (
	// ErrUnsupported marks a tokenizer file this package does not implement: another model type,
	// pre-tokenizer, regular expression or normalizer, or options that change the counts
	// (dropout, subword prefixes). Counting it anyway would give wrong counts.
	ErrUnsupported = errors.New("unsupported tokenizer")
	// ErrInvalid marks a malformed file: bad JSON, a merge of tokens not in the vocabulary, a
	// merges line that is not two symbols.
	ErrInvalid = errors.New("invalid tokenizer file")
)

// FLOPsPerByte is the FLOP-equivalent cost of counting one byte of text, sluice's stated
// convention (an estimate of the arithmetic per unit, counted from the algorithm, not measured on
// a machine), for charging the count itself to a ledger. Every byte is decoded and classified by
// the splitter (2), hashed into its word's cache key (2) and compared with the cached word (1).
// A byte of a word the cache misses also goes through the merge loop: on the fixture texts about
// 2 table probes of 4 and 4 to 5 rank compares of 1 a byte, and a symbol load, 12 to 14 in all
// (GPT-2, Llama-3). With m the share of bytes in missed words that is 5 + 14·m; m is 0.51 with an
// empty cache for each fixture text and 0.38 with one cache for all (TestCacheMissRate), and a
// long pass over a pool in one language misses far less. Charged at m = 3/4, an upper bound:
// 15.5. A file with NFC adds, for text with runes from U+0300 up, three table probes of 4 a rune,
// about 4 a byte at the 3 bytes a rune of most such scripts: 19.5 in all, rounded up to 20.
const FLOPsPerByte = 20

// A Tokenizer counts tokens as one tokenizer file defines them. It keeps a cache of recent words
// and scratch memory, so it is not safe for concurrent use: Clone gives one per goroutine, sharing
// the model.
//
// Count is the length of the id sequence the tokenizer's encode gives for the text, without the
// tokens a post-processor adds (Hugging Face's add_special_tokens=False): the training tokens of a
// row's text before the trainer adds BOS or EOS, which a caller charges per row if its trainer
// does.
//
// Memory: the model holds the merge table (an open-addressing table of 16 bytes a slot, at most
// three quarters full: 2 MiB for GPT-2's 50,000 merges, 8 MiB for Llama-3's 280,000), the 256 byte
// ids, the added tokens, and, when the file sets "ignore_merges", the vocabulary keyed by bytes
// (a Go map, about 60 bytes an entry). BenchmarkLoad measures the heap each reference file keeps:
// 2.0 MiB for GPT-2 (50,257 tokens), 15.7 MiB for Llama-3 (128,256 tokens, ignore_merges) and
// 4.3 MiB for Qwen3 (151,669 tokens). A Tokenizer adds a word cache that grows from 8 KiB to at
// most 512 KiB as it counts, and scratch memory of about 40 bytes a byte of the word it is
// merging, kept between words up to 1 MiB.
type Tokenizer struct {
	m     *model
	cache *wordCache
	sc    scratch
	buf   []byte // a piece with the space add_prefix_space puts before it
	norm  []byte // a stretch of text in NFC
	runes []rune // NFC's scratch

	count  int      // tokens counted so far by Count
	missed int      // bytes of the words the cache did not hold, for the FLOPsPerByte estimate
	ids    []uint32 // ids appended so far by appendIDs
	want   bool     // appendIDs is running: record ids rather than count
}

// model is what a tokenizer file defines, read-only once loaded and shared by clones.
type model struct {
	bpe bpe
	// splits are the Split pre-tokenizers that run before ByteLevel, in order.
	splits []pattern
	// byteRegex is ByteLevel's use_regex: split with GPT-2's expression after splits.
	byteRegex bool
	// prefixSpace is ByteLevel's add_prefix_space: a piece that reaches it without a leading
	// space gets one.
	prefixSpace bool
	// raw holds the added tokens matched before normalisation ("normalized": false), normal the
	// others.
	raw, normal addedSet
	// nfc is set when the file's normalizer is NFC.
	nfc *nfc
}

// Clone returns a Tokenizer that shares t's model (the vocabulary and merges, read-only) with a
// cache and scratch memory of its own, for use on another goroutine.
func (t *Tokenizer) Clone() *Tokenizer {
	return &Tokenizer{m: t.m}
}

// Count returns the number of tokens the tokenizer makes of text. It never fails: bytes that are
// not UTF-8 are tokenised as the bytes they are.
func (t *Tokenizer) Count(text []byte) int {
	t.count, t.want = 0, false
	t.text(text)
	return t.count
}

// appendIDs appends the token ids of text to dst, through the same steps as Count without the
// word cache; the tests compare them with reference ids.
func (t *Tokenizer) appendIDs(dst []uint32, text []byte) []uint32 {
	t.ids, t.want = dst, true
	t.text(text)
	t.want = false
	dst, t.ids = t.ids, nil
	return dst
}

// text splits s around the added tokens matched before normalisation.
func (t *Tokenizer) text(s []byte) {
	from := 0
	for {
		start, end, k := t.m.raw.find(s, from)
		if k < 0 {
			break
		}
		t.normalized(s[from:start])
		t.added(t.m.raw.tokens[k].id)
		from = end
	}
	t.normalized(s[from:])
}

// normalized normalises a stretch of text between raw added tokens and splits it around the
// normalised ones.
func (t *Tokenizer) normalized(s []byte) {
	if t.m.nfc != nil && !unchanged(s) && !t.m.nfc.isNFC(s) {
		t.norm, t.runes = t.m.nfc.appendNFC(t.norm[:0], s, t.runes)
		s = t.norm
	}
	from := 0
	for {
		start, end, k := t.m.normal.find(s, from)
		if k < 0 {
			break
		}
		t.pre(s[from:start], 0)
		t.added(t.m.normal.tokens[k].id)
		from = end
	}
	t.pre(s[from:], 0)
	if cap(t.norm) > keepBelow {
		t.norm, t.runes = nil, nil
	}
}

func (t *Tokenizer) added(id uint32) {
	if t.want {
		t.ids = append(t.ids, id)
		return
	}
	t.count++
}

// pre runs the Split pre-tokenizers from level on, then ByteLevel, and hands each word to BPE.
func (t *Tokenizer) pre(s []byte, level int) {
	if len(s) == 0 {
		return
	}
	if level < len(t.m.splits) {
		p := t.m.splits[level]
		for len(s) > 0 {
			k := p.next(s)
			t.pre(s[:k], level+1)
			s = s[k:]
		}
		return
	}
	if t.m.prefixSpace && s[0] != ' ' {
		t.buf = append(append(t.buf[:0], ' '), s...)
		s = t.buf
	}
	if !t.m.byteRegex {
		t.word(s)
		return
	}
	for len(s) > 0 {
		k := patGPT2.next(s)
		t.word(s[:k])
		s = s[k:]
	}
}

// word adds the tokens of one pre-token, from the cache when it is there.
func (t *Tokenizer) word(w []byte) {
	if t.want {
		t.ids = append(t.ids, t.m.bpe.encode(w, &t.sc)...)
		t.trim()
		return
	}
	if len(w) > cacheKey {
		t.count += len(t.m.bpe.encode(w, &t.sc))
		t.missed += len(w)
		t.trim()
		return
	}
	if t.cache == nil {
		t.cache = newWordCache()
	}
	slot := t.cache.slot(w)
	if n, ok := slot.get(w); ok {
		t.count += n
		return
	}
	n := len(t.m.bpe.encode(w, &t.sc))
	t.missed += len(w)
	t.cache.put(slot, w, n)
	t.count += n
}

// keepBelow bounds the scratch memory a Tokenizer keeps between words (and the NFC buffer it keeps
// between texts); more is let go.
const keepBelow = 1 << 20

func (t *Tokenizer) trim() {
	if cap(t.sc.heap)*8 > keepBelow || cap(t.sc.ids)*4 > keepBelow {
		t.sc = scratch{}
	}
}

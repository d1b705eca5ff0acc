package tokens

import (
	"bufio"
	"compress/bzip2"
	"os"
	"strconv"
	"strings"
	"testing"
	"unicode/utf8"
)

// normalizationTest is Unicode's conformance file for normalisation, Unicode 15.0 as Debian's
// unicode-data package ships it (install.sh installs that package when it is absent).
const normalizationTest = "/usr/share/unicode/NormalizationTest.txt.bz2"

// TestNFCConformance runs every line of NormalizationTest.txt through NFC: for columns c1..c5,
// c2 = NFC(c1) = NFC(c2) = NFC(c3) and c4 = NFC(c4) = NFC(c5), as the file's header states; and
// every code point that part 1 does not list is its own NFC.
func TestNFCConformance(t *testing.T) {
	f, err := os.Open(normalizationTest)
	if err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("%v: run bash index/tokens/testdata/ref/install.sh", err)
		}
		t.Skipf("%v: Debian's unicode-data package is not installed", err)
	}
	defer f.Close()
	n, err := newNFC()
	if err != nil {
		t.Fatal(err)
	}
	toNFC := func(s string) string {
		out, _ := n.appendNFC(nil, []byte(s), nil)
		return string(out)
	}
	listed := map[rune]bool{}
	part, lines := "", 0
	sc := bufio.NewScanner(bzip2.NewReader(f))
	for sc.Scan() {
		line := sc.Text()
		if strings.HasPrefix(line, "@Part") {
			part = line
			continue
		}
		if line == "" || line[0] == '#' {
			continue
		}
		var c [5]string
		for i, field := range strings.SplitN(line, ";", 6)[:5] {
			for _, h := range strings.Fields(field) {
				v, err := strconv.ParseUint(h, 16, 32)
				if err != nil {
					t.Fatalf("%q: %v", line, err)
				}
				c[i] += string(rune(v))
			}
		}
		if part == "@Part1 # Character by character test" {
			r, _ := utf8.DecodeRuneInString(c[0])
			listed[r] = true
		}
		lines++
		// The quick check may say "maybe" for text in NFC, never "yes" for text that is not.
		for _, in := range c {
			if n.isNFC([]byte(in)) && toNFC(in) != in {
				t.Fatalf("%s: isNFC(%+q), but NFC changes it", line, in)
			}
		}
		for _, check := range []struct{ in, want string }{
			{c[0], c[1]}, {c[1], c[1]}, {c[2], c[1]}, {c[3], c[3]}, {c[4], c[3]},
		} {
			if got := toNFC(check.in); got != check.want {
				t.Fatalf("%s: NFC(%+q) = %+q, want %+q", line, check.in, got, check.want)
			}
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	for r := rune(0); r <= utf8.MaxRune; r++ {
		if listed[r] || 0xD800 <= r && r <= 0xDFFF {
			continue
		}
		if s := string(r); toNFC(s) != s {
			t.Fatalf("NFC(%U) = %+q, want itself", r, toNFC(s))
		}
	}
	t.Logf("%d lines", lines)
}

// TestNFCKeepsInvalidBytes checks that bytes that are not UTF-8 pass through NFC, and that the
// quick check's threshold is right: U+0300 is the first rune anything combines with.
func TestNFCKeepsInvalidBytes(t *testing.T) {
	n, err := newNFC()
	if err != nil {
		t.Fatal(err)
	}
	for in, want := range map[string]string{
		"e\u0301\xffe\u0301": "\u00e9\xff\u00e9",
		"\xcc":               "\xcc",
		"a\u0300":            "\u00e0",
		"\u1100\u1161\u11a8": "\uac01",
	} {
		if got, _ := n.appendNFC(nil, []byte(in), nil); string(got) != want {
			t.Errorf("NFC(%+q) = %+q, want %+q", in, got, want)
		}
	}
	if unchanged([]byte("a\u0300")) || !unchanged([]byte("naïve ÿ")) {
		t.Error("unchanged is wrong about U+0300")
	}
}

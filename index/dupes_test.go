package index

import (
	"hash/fnv"
	"testing"
)

func TestHashIDIsFNV1a(t *testing.T) {
	for _, s := range []string{"", "a", "pool-0001", "\x00\xff"} {
		h := fnv.New64a()
		h.Write([]byte(s))
		if got, want := hashID([]byte(s)), h.Sum64(); got != want {
			t.Errorf("hashID(%q) = %x, hash/fnv says %x", s, got, want)
		}
	}
}

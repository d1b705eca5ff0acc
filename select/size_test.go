package selection

import (
	"testing"
	"unsafe"
)

// TestPerRowSizes pins the bytes Pick holds per row, which the pick's memory estimate counts on: a
// Decision, 16 bytes, and a place in the ranking, 12.
func TestPerRowSizes(t *testing.T) {
	for _, tc := range []struct {
		what      string
		got, want uintptr
	}{
		{"Decision", unsafe.Sizeof(Decision{}), 16},
		{"rankKey", unsafe.Sizeof(rankKey{}), 12},
	} {
		if tc.got != tc.want {
			t.Errorf("%s takes %d bytes, want %d", tc.what, tc.got, tc.want)
		}
	}
}

package index

import (
	"encoding/json"
	"strings"

	"sluice/index/atomicdir"
)

// Folder describes the kind of folder an index is, for atomicdir's checks: a meta.json of this format, and
// nothing but an index's files. A rebuild may replace such a folder; any other is left alone.
func Folder() atomicdir.Kind {
	return atomicdir.Kind{Name: "index", Mark: metaFile,
		IsOur: func(b []byte) bool {
			var m struct{ Format string }
			return json.Unmarshal(b, &m) == nil && m.Format == Format
		},
		Holds: func(name string) bool {
			switch name {
			case metaFile, lexiconFile, lexKeysFile, postingsFile, rowsFile, normsFile, idsFile, rejectedFile, dupsFile, contamFile, sketchesFile:
				return true
			}
			// Input read from stdin or a pipe is stored under this prefix so rows can be copied later.
			return strings.HasPrefix(name, stdinPrefix)
		}}
}

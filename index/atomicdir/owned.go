package atomicdir

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"syscall"
)

// Kind is a kind of folder that sluice publishes: the names it may hold and the file whose content
// says sluice made it. A folder is sluice's to replace only when it holds that mark and nothing but
// those names: a user's file beside them, or a folder holding a file that merely has the same name,
// is never deleted.
type Kind struct {
	Name  string                 // what the folder is, for errors: "run", "index", "plan"
	Mark  string                 // the file whose content marks the folder as sluice's
	IsOur func(b []byte) bool    // whether Mark's content is sluice's own of this kind
	Holds func(name string) bool // whether a name may stand in the folder
}

// isOurs reports whether dir is a folder of kind k, and if not, why not.
func (k Kind) isOurs(dir string, entries []os.DirEntry) error {
	var strange []string
	for _, e := range entries {
		if !k.Holds(e.Name()) {
			strange = append(strange, e.Name())
		}
	}
	if len(strange) > 0 {
		sort.Strings(strange)
		more := ""
		if len(strange) > 3 {
			more = fmt.Sprintf(" and %d more", len(strange)-3)
			strange = strange[:3]
		}
		return fmt.Errorf("it holds %s%s, which sluice did not write as %s", strings.Join(strange, ", "), more, article(k.Name))
	}
	b, err := os.ReadFile(filepath.Join(dir, k.Mark))
	if err != nil || !k.IsOur(b) {
		return fmt.Errorf("it has no %s of %s made by sluice", k.Mark, article(k.Name))
	}
	return nil
}

// ErrOtherKind is returned by CheckOut for a folder that sluice made as something else: an index
// named as a run's folder, say.
var ErrOtherKind = errors.New("refusing to replace a sluice folder of another kind")

func article(noun string) string {
	if noun != "" && strings.ContainsRune("aeiou", rune(noun[0])) {
		return "an " + noun
	}
	return "a " + noun
}

// ErrInput is returned by CheckOut when the output would replace or hold an input of the same
// command.
var ErrInput = errors.New("an output may not replace or hold an input of the same command")

// CheckOut reports, before any work is done, whether a folder of kind k may be published at dir:
// dir does not exist and its parent is a folder, or dir is an empty folder, or a folder of kind k
// and nothing else. It refuses a dir that is a symbolic link (publishing would replace the link,
// not what it points to), a dir that is or holds one of inputs, and a dir whose parent is a folder
// of one of the kinds in within (whose owner would then find a stranger in it).
func CheckOut(dir string, k Kind, inputs []string, within ...Kind) error {
	clean := filepath.Clean(dir)
	if base := filepath.Base(clean); base == "." || base == ".." || base == string(filepath.Separator) {
		return fmt.Errorf("write %s: name the %s folder itself, not . or .. or /", dir, k.Name)
	}
	if err := checkInputs(dir, inputs, false); err != nil {
		return err
	}
	parent := filepath.Dir(clean)
	for _, w := range within {
		if entries, err := os.ReadDir(parent); err == nil && w.isOurs(parent, entries) == nil {
			return fmt.Errorf("write %s: %s is %s folder, which must hold only its own files: choose a folder outside it", dir, parent, article(w.Name))
		}
	}
	fi, err := os.Lstat(dir)
	if errors.Is(err, os.ErrNotExist) || errors.Is(err, syscall.ENOTDIR) {
		return checkAncestor(dir, parent)
	}
	switch {
	case err != nil:
		return fmt.Errorf("write %s: %w", dir, err)
	case fi.Mode()&os.ModeSymlink != 0:
		return fmt.Errorf("write %s: is a symbolic link; name the folder it points to, or another", dir)
	case !fi.IsDir():
		return fmt.Errorf("write %s: exists and is not a folder", dir)
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return fmt.Errorf("write %s: %w", dir, err)
	}
	if len(entries) == 0 {
		return nil
	}
	why := k.isOurs(dir, entries)
	if why == nil {
		return nil
	}
	for _, w := range within {
		if w.Name != k.Name && w.isOurs(dir, entries) == nil {
			return fmt.Errorf("write %s: %w: it is %s made by sluice, not %s; choose another folder", dir, ErrOtherKind, article(w.Name), article(k.Name))
		}
	}
	return fmt.Errorf("write %s: %w: %v", dir, ErrNotOurs, why)
}

// checkAncestor allows a missing parent, made when the output is published, when the nearest
// ancestor that exists is a folder.
func checkAncestor(out, parent string) error {
	for p := parent; ; p = filepath.Dir(p) {
		fi, err := os.Stat(p)
		switch {
		case err == nil && fi.IsDir():
			return nil
		case err == nil:
			return fmt.Errorf("write %s: %s is not a folder", out, p)
		case !errors.Is(err, os.ErrNotExist):
			return fmt.Errorf("write %s: %w", out, err)
		case filepath.Dir(p) == p:
			return fmt.Errorf("write %s: no folder above it exists", out)
		}
	}
}

// checkInputs refuses an output path that is one of inputs or holds one and, when holdsOut is set,
// one that lies inside an input folder; it compares resolved paths, so that a link or a relative
// path cannot hide it.
func checkInputs(out string, inputs []string, holdsOut bool) error {
	o, err := resolve(out)
	if err != nil {
		return nil // out does not resolve; an input cannot be in it
	}
	for _, in := range inputs {
		if in == "" || in == "-" {
			continue
		}
		i, err := resolve(in)
		if err != nil {
			continue
		}
		if within(o, i) {
			return fmt.Errorf("write %s: %w: %s would be replaced", out, ErrInput, in)
		}
		if fi, err := os.Stat(i); holdsOut && err == nil && fi.IsDir() && within(i, o) {
			return fmt.Errorf("write %s: %w: it lies inside %s", out, ErrInput, in)
		}
	}
	return nil
}

// within reports whether path p is dir or lies below it; both are resolved.
func within(dir, p string) bool {
	rel, err := filepath.Rel(dir, p)
	return err == nil && rel != ".." && !strings.HasPrefix(rel, ".."+string(filepath.Separator))
}

// resolve makes p absolute with links resolved, as far as it exists: a path that does not exist yet
// resolves through its nearest existing parent.
func resolve(p string) (string, error) {
	abs, err := filepath.Abs(p)
	if err != nil {
		return "", err
	}
	rest := ""
	for {
		if r, err := filepath.EvalSymlinks(abs); err == nil {
			return filepath.Join(r, rest), nil
		}
		parent := filepath.Dir(abs)
		if parent == abs {
			return "", os.ErrNotExist
		}
		rest = filepath.Join(filepath.Base(abs), rest)
		abs = parent
	}
}

// CheckFile reports, before any work is done, whether a file may be written at path: it does not
// exist and its parent is a folder, or it is a regular file that ours says sluice wrote, and it is
// none of inputs. Like CheckOut, it refuses a path whose parent is a folder of one of the kinds in
// within, which must hold only its own files.
func CheckFile(path, what string, ours func(b []byte) bool, inputs []string, within ...Kind) error {
	parent := filepath.Dir(filepath.Clean(path))
	for _, w := range within {
		if entries, err := os.ReadDir(parent); err == nil && w.isOurs(parent, entries) == nil {
			return fmt.Errorf("write %s: %s is %s folder, which must hold only its own files: choose a folder outside it", path, parent, article(w.Name))
		}
	}
	fi, err := os.Lstat(path)
	if errors.Is(err, os.ErrNotExist) {
		if pfi, perr := os.Stat(parent); perr != nil || !pfi.IsDir() {
			return fmt.Errorf("write %s: parent folder %s does not exist", path, parent)
		}
		return checkInputs(path, inputs, true)
	}
	switch {
	case err != nil:
		return fmt.Errorf("write %s: %w", path, err)
	case fi.Mode()&os.ModeSymlink != 0:
		return fmt.Errorf("write %s: is a symbolic link; name another file", path)
	case fi.IsDir():
		return fmt.Errorf("write %s: is a folder; name a file to write the %s to", path, what)
	case !fi.Mode().IsRegular():
		return fmt.Errorf("write %s: is not a regular file", path)
	}
	if err := checkInputs(path, inputs, true); err != nil {
		return err
	}
	b, err := readHead(path, 4096)
	if err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	if !ours(b) {
		return fmt.Errorf("write %s: refusing to replace a file that sluice did not write as a %s", path, what)
	}
	return nil
}

// readHead reads at most n bytes from the start of path: enough to recognise what wrote it.
func readHead(path string, n int) ([]byte, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	b := make([]byte, n)
	m, err := f.Read(b)
	if m > 0 {
		err = nil
	}
	return b[:m], err
}

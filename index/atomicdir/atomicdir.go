package atomicdir

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"golang.org/x/sys/unix"
)

// Temp makes an empty working folder beside dir, on the same file system so it can be renamed into
// place. Its name starts with a dot, says it is temporary and holds the process id, so that working
// folders left by a killed process are removed by the next one, while those of a live one stay.
func Temp(dir string) (string, error) {
	clean := filepath.Clean(dir)
	parent, prefix := filepath.Dir(clean), "."+filepath.Base(clean)+".tmp-"
	removeStale(parent, prefix)
	tmp, err := os.MkdirTemp(parent, prefix+strconv.Itoa(os.Getpid())+"-")
	if err != nil {
		return "", fmt.Errorf("make working folder for %s: %w", dir, err)
	}
	return tmp, nil
}

// removeStale removes the working folders beside dir whose process is gone.
func removeStale(parent, prefix string) {
	entries, err := os.ReadDir(parent)
	if err != nil {
		return
	}
	for _, e := range entries {
		rest, ok := strings.CutPrefix(e.Name(), prefix)
		if !ok || !e.IsDir() {
			continue
		}
		pidText, _, _ := strings.Cut(rest, "-")
		pid, err := strconv.Atoi(pidText)
		if err != nil || pid <= 0 || pid == os.Getpid() {
			continue
		}
		if err := unix.Kill(pid, 0); errors.Is(err, unix.ESRCH) {
			os.RemoveAll(filepath.Join(parent, e.Name()))
		}
	}
}

// Publish makes tmp appear at dir. Every file in tmp must already be synced. If dir exists it is
// swapped out in one step where the system allows (renameat2 RENAME_EXCHANGE) and then removed.
func Publish(tmp, dir string) error {
	if err := syncDir(tmp); err != nil {
		return fmt.Errorf("publish %s: %w", dir, err)
	}
	parent := filepath.Dir(filepath.Clean(dir))
	err := os.Rename(tmp, dir)
	if err != nil {
		var le *os.LinkError
		if !errors.As(err, &le) || !(errors.Is(err, unix.ENOTEMPTY) || errors.Is(err, unix.EEXIST)) {
			return fmt.Errorf("publish %s: %w", dir, err)
		}
		if xerr := unix.Renameat2(unix.AT_FDCWD, tmp, unix.AT_FDCWD, dir, unix.RENAME_EXCHANGE); xerr != nil {
			// Without an exchange, move the old folder aside first: a crash between the two renames
			// leaves no folder at dir, which is "none", never a partial one.
			old := tmp + ".old"
			if rerr := os.Rename(dir, old); rerr != nil {
				return fmt.Errorf("publish %s: %w", dir, rerr)
			}
			if rerr := os.Rename(tmp, dir); rerr != nil {
				return fmt.Errorf("publish %s: %w", dir, rerr)
			}
			tmp = old
		}
		// tmp now holds the old folder.
		if err := os.RemoveAll(tmp); err != nil {
			return fmt.Errorf("publish %s: remove previous: %w", dir, err)
		}
	}
	if err := syncDir(parent); err != nil {
		return fmt.Errorf("publish %s: %w", dir, err)
	}
	return nil
}

func syncDir(dir string) error {
	f, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer f.Close()
	if err := f.Sync(); err != nil && !errors.Is(err, unix.EINVAL) {
		return err
	}
	return nil
}

// ErrNotOurs is returned by CheckReplaceable for a folder that Publish must not replace.
var ErrNotOurs = errors.New("refusing to replace a folder that is neither empty nor made by sluice")

// CheckReplaceable reports whether dir may be published over: it does not exist and its parent
// does, or it is an empty folder, or ours says it is a folder of the same kind. It is checked before
// any work is done, so a mistyped path costs nothing and destroys nothing.
func CheckReplaceable(dir string, ours func(dir string) bool) error {
	fi, err := os.Stat(dir)
	if errors.Is(err, os.ErrNotExist) {
		parent := filepath.Dir(filepath.Clean(dir))
		if pfi, perr := os.Stat(parent); perr != nil || !pfi.IsDir() {
			return fmt.Errorf("write %s: parent folder %s does not exist", dir, parent)
		}
		return nil
	}
	if err != nil {
		return fmt.Errorf("write %s: %w", dir, err)
	}
	if !fi.IsDir() {
		return fmt.Errorf("write %s: exists and is not a folder", dir)
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return fmt.Errorf("write %s: %w", dir, err)
	}
	if len(entries) == 0 || ours(dir) {
		return nil
	}
	return fmt.Errorf("write %s: %w", dir, ErrNotOurs)
}

package atomicdir

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"golang.org/x/sys/unix"
)

// Temp makes an empty working folder beside dir, on the same file system so it can be renamed into
// place. Its name starts with a dot and says it is temporary. The folder itself is locked (flock)
// for as long as it is being worked on: until Publish or Discard, or the end of the process, which
// a crash or a kill also brings. Working folders whose lock is free were left by a process that
// died, and the next Temp for the same dir removes them. A lock, unlike a process id, says the same
// thing to every process that can see the folder, in another PID namespace or on another host of a
// shared file system; and locking the folder, not a file in it, leaves the folder holding only
// what the caller writes.
func Temp(dir string) (string, error) {
	clean := filepath.Clean(dir)
	parent, prefix := filepath.Dir(clean), "."+filepath.Base(clean)+".tmp-"
	// A missing parent is made, as a user naming run/2026-12/support expects; CheckOut has made
	// sure the nearest one that exists is a plain folder.
	if err := os.MkdirAll(parent, 0o777); err != nil {
		return "", fmt.Errorf("make a working folder beside %s: %w", dir, pathless(err))
	}
	removeStale(parent, prefix)
	// Another process's clean-up may take a folder in the moment between its making and its lock;
	// it then removes it, and another is made.
	for range 3 {
		made, err := mkdirFresh(parent, prefix+strconv.Itoa(os.Getpid())+"-")
		if err != nil {
			return "", fmt.Errorf("make a working folder beside %s: %w", dir, pathless(err))
		}
		tmp, taken, err := lockWorking(made)
		if err != nil {
			os.RemoveAll(made)
			return "", fmt.Errorf("make a working folder beside %s: %w", dir, pathless(err))
		}
		if !taken {
			return tmp, nil
		}
	}
	return "", fmt.Errorf("make a working folder beside %s: other processes' clean-ups keep removing it", dir)
}

// mkdirFresh makes a new folder in parent named prefix and a random number, with the mode a plain
// mkdir gives: 0777 less the umask (and whatever a default ACL of parent adds). os.MkdirTemp
// would make it 0700, and the folder keeps its mode when published, so every index or run would be
// private whatever the user's umask says. Asking the kernel for 0777 lets it apply the umask
// itself, as it does for mkdir(1): reading the umask takes syscall.Umask, which sets it too, and
// between setting and restoring it another goroutine's files would be made with the wrong mode.
func mkdirFresh(parent, prefix string) (string, error) {
	for range 10000 {
		name := filepath.Join(parent, prefix+strconv.FormatUint(uint64(rand.Uint32()), 10))
		err := os.Mkdir(name, 0o777)
		if err == nil {
			return name, nil
		}
		if !errors.Is(err, fs.ErrExist) {
			return "", err
		}
	}
	return "", &os.PathError{Op: "mkdir", Path: filepath.Join(parent, prefix+"*"), Err: fs.ErrExist}
}

// TempFile creates a new file beside path, named after it with a dot before and a random number
// after, for the caller to fill, sync and rename onto path. Its mode is what os.Create gives, 0666
// less the umask, which os.CreateTemp (0600) would not.
func TempFile(path string) (*os.File, error) {
	clean := filepath.Clean(path)
	prefix := filepath.Join(filepath.Dir(clean), "."+filepath.Base(clean)+".tmp-")
	for range 10000 {
		f, err := os.OpenFile(prefix+strconv.FormatUint(uint64(rand.Uint32()), 10), os.O_RDWR|os.O_CREATE|os.O_EXCL, 0o666)
		if !errors.Is(err, fs.ErrExist) {
			return f, err
		}
	}
	return nil, &os.PathError{Op: "open", Path: prefix + "*", Err: fs.ErrExist}
}

// ReplaceFile writes b to a new file beside path (TempFile), syncs it and renames it onto path, so
// path holds its old bytes or all of b, never part of them. The caller decides first whether path
// may be replaced.
func ReplaceFile(path string, b []byte) error {
	f, err := TempFile(path)
	if err != nil {
		return err
	}
	_, err = f.Write(b)
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Rename(f.Name(), path)
	}
	if err != nil {
		os.Remove(f.Name())
	}
	return err
}

// lockWorking locks the working folder made and renames it to its final name, which adds the number
// of the descriptor holding the lock: "pid-random-descriptor". Publish and Discard, given only the
// folder's path, find the descriptor there to release the lock; a folder named "pid-random" is one
// not yet locked, or made by a sluice from before the locks. taken reports that another process's
// clean-up took made for a dead process's folder before it could be locked; the caller makes
// another.
func lockWorking(made string) (tmp string, taken bool, err error) {
	fd, err := unix.Open(made, unix.O_RDONLY|unix.O_DIRECTORY|unix.O_CLOEXEC, 0)
	if err != nil {
		return "", false, &os.PathError{Op: "open", Path: made, Err: err}
	}
	// A file system that cannot lock a folder (one emulating flock with record locks, as NFS does,
	// locks only files open for writing) cannot say who lives: no lock is held then, and
	// removeStale, which cannot take one either, removes nothing.
	err = unix.Flock(fd, unix.LOCK_EX|unix.LOCK_NB)
	// Another process's clean-up holds the lock for as long as it takes to judge the folder.
	for try := 0; errors.Is(err, unix.EWOULDBLOCK) && try < 10; try++ {
		time.Sleep(10 * time.Millisecond)
		err = unix.Flock(fd, unix.LOCK_EX|unix.LOCK_NB)
	}
	switch {
	case errors.Is(err, unix.EWOULDBLOCK):
		unix.Close(fd)
		return "", true, nil
	case err != nil && !errors.Is(err, unix.ENOLCK) && !errors.Is(err, unix.EOPNOTSUPP) && !errors.Is(err, unix.EINVAL) && !errors.Is(err, unix.EBADF):
		unix.Close(fd)
		return "", false, &os.PathError{Op: "lock", Path: made, Err: err}
	}
	if !isOpenAs(fd, made) {
		unix.Close(fd)
		return "", true, nil
	}
	tmp = made + "-" + strconv.Itoa(fd)
	if err := unix.Rename(made, tmp); err != nil {
		unix.Close(fd)
		if errors.Is(err, unix.ENOENT) {
			return "", true, nil
		}
		return "", false, &os.PathError{Op: "rename", Path: made, Err: err}
	}
	return tmp, false, nil
}

// isOpenAs reports whether the descriptor fd is open on the folder at path.
func isOpenAs(fd int, path string) bool {
	var held, named unix.Stat_t
	return unix.Fstat(fd, &held) == nil && unix.Lstat(path, &named) == nil && held.Dev == named.Dev && held.Ino == named.Ino
}

// heldLock returns the descriptor by which this process holds the lock of the working folder tmp,
// or -1: the one its name ends with, if that is open on this very folder.
func heldLock(tmp string) int {
	name := filepath.Base(filepath.Clean(tmp))
	i := strings.LastIndexByte(name, '-')
	fd, err := strconv.Atoi(name[i+1:])
	if i < 0 || err != nil || fd < 0 || !isOpenAs(fd, tmp) {
		return -1
	}
	return fd
}

// removeStale removes the working folders beside dir that no live process holds: those whose lock
// this process can take. A folder named without a descriptor was made by a sluice from before the
// locks, or is about to be locked; it is removed, as before the locks, only when the process its
// name holds is gone too, and should that be a live one elsewhere, it makes another.
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
		path := filepath.Join(parent, e.Name())
		nums, ok := numbers(rest)
		if !ok {
			continue // not a name Temp gives
		}
		fd, err := unix.Open(path, unix.O_RDONLY|unix.O_DIRECTORY|unix.O_NOFOLLOW|unix.O_CLOEXEC, 0)
		if err != nil {
			continue
		}
		// The lock is kept while removing, so that no other process takes the folder meanwhile.
		if unix.Flock(fd, unix.LOCK_EX|unix.LOCK_NB) == nil && (len(nums) == 3 || nums[0] > 0 && errors.Is(unix.Kill(nums[0], 0), unix.ESRCH)) {
			os.RemoveAll(path)
		}
		unix.Close(fd)
	}
}

// numbers parses "pid-random" or "pid-random-descriptor", the end of a name Temp gives.
func numbers(rest string) ([]int, bool) {
	parts := strings.Split(rest, "-")
	if len(parts) != 2 && len(parts) != 3 {
		return nil, false
	}
	nums := make([]int, len(parts))
	for i, p := range parts {
		n, err := strconv.Atoi(p)
		if err != nil || n < 0 {
			return nil, false
		}
		nums[i] = n
	}
	return nums, true
}

// WriteFile creates the file path, in a working folder from Temp, lets fill write it through a
// buffer, and syncs it before closing, so that Publish makes public only what is on disk. The bytes
// also go to each of tee (a hash, say) as they go to the file. Errors do not name path, which is in a
// working folder the user never sees: callers name the file as it will be published.
func WriteFile(path string, fill func(w *bufio.Writer) error, tee ...io.Writer) error {
	f, err := os.Create(path)
	if err != nil {
		return pathless(err)
	}
	var to io.Writer = f
	if len(tee) > 0 {
		to = io.MultiWriter(append([]io.Writer{f}, tee...)...)
	}
	w := bufio.NewWriterSize(to, 1<<20)
	err = fill(w)
	if err == nil {
		err = w.Flush()
	}
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	return pathless(err)
}

// Discard removes the working folder tmp, made by Temp and not to be published, and releases its
// lock. A caller that removes it otherwise leaves the lock held by an open descriptor until the
// process ends.
func Discard(tmp string) error {
	fd := heldLock(tmp)
	err := os.RemoveAll(tmp)
	if fd >= 0 {
		unix.Close(fd)
	}
	return err
}

// Publish makes tmp appear at dir. Every file in tmp must already be synced. If dir exists it is
// swapped out in one step where the system allows (renameat2 RENAME_EXCHANGE) and then removed.
// The lock that Temp took goes with the folder and is released at the end.
func Publish(tmp, dir string) error {
	if fd := heldLock(tmp); fd >= 0 {
		defer unix.Close(fd)
	}
	if err := syncDir(tmp); err != nil {
		return fmt.Errorf("publish %s: %w", dir, pathless(err))
	}
	parent := filepath.Dir(filepath.Clean(dir))
	err := os.Rename(tmp, dir)
	if err != nil {
		var le *os.LinkError
		if !errors.As(err, &le) || !(errors.Is(err, unix.ENOTEMPTY) || errors.Is(err, unix.EEXIST)) {
			return fmt.Errorf("publish %s: %w", dir, pathless(err))
		}
		if xerr := unix.Renameat2(unix.AT_FDCWD, tmp, unix.AT_FDCWD, dir, unix.RENAME_EXCHANGE); xerr != nil {
			// Without an exchange, move the old folder aside first: a crash between the two renames
			// leaves no folder at dir, which is "none", never a partial one.
			old := tmp + ".old"
			if rerr := os.Rename(dir, old); rerr != nil {
				return fmt.Errorf("publish %s: move the previous one aside: %w", dir, pathless(rerr))
			}
			if rerr := os.Rename(tmp, dir); rerr != nil {
				return fmt.Errorf("publish %s: %w", dir, pathless(rerr))
			}
			tmp = old
		}
		// tmp now holds the old folder.
		if err := os.RemoveAll(tmp); err != nil {
			return fmt.Errorf("publish %s: remove the previous one: %w", dir, pathless(err))
		}
	}
	if err := syncDir(parent); err != nil {
		return fmt.Errorf("publish %s: %w", dir, pathless(err))
	}
	return nil
}

// pathless strips the path from a file system error: the paths here are of working folders, which
// mean nothing to the reader of a message, who is told the destination instead.
func pathless(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return fmt.Errorf("%s: %w", pe.Op, pe.Err)
	}
	var le *os.LinkError
	if errors.As(err, &le) {
		return fmt.Errorf("%s: %w", le.Op, le.Err)
	}
	return err
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

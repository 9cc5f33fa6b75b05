// Package atomicfile writes result files so that a reader never sees a half
// written file and a user's existing file is never replaced by accident.
package atomicfile

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
)

// ErrExists is returned, wrapped, when a destination already exists and
// overwriting was not allowed.
var ErrExists = errors.New("already exists (use --force to overwrite)")

// Write creates path by calling fill on a temporary file in the same
// directory and renaming it into place once fill and Close have succeeded.
// When force is false and path exists, Write returns an error wrapping
// ErrExists and leaves the file untouched. On any failure the temporary file
// is removed.
func Write(path string, force bool, fill func(w io.Writer) error) (err error) {
	if !force {
		if _, err := os.Lstat(path); err == nil {
			return fmt.Errorf("%s: %w", path, ErrExists)
		} else if !errors.Is(err, fs.ErrNotExist) {
			return err
		}
	}
	dir := filepath.Dir(path)
	tmp, err := os.CreateTemp(dir, "."+filepath.Base(path)+".tmp*")
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	if err = fill(tmp); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err = tmp.Sync(); err != nil {
		return err
	}
	if err = tmp.Close(); err != nil {
		return err
	}
	if err = os.Chmod(tmp.Name(), 0o644); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), path)
}

// WriteBytes is Write for content already in memory.
func WriteBytes(path string, force bool, b []byte) error {
	return Write(path, force, func(w io.Writer) error {
		_, err := w.Write(b)
		return err
	})
}

// PrepareDir makes dir ready to receive outputs. A missing dir is created; an
// existing empty one is used; an existing non-empty one is refused with an
// error wrapping ErrExists unless force is true.
func PrepareDir(dir string, force bool) error {
	entries, err := os.ReadDir(dir)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return os.MkdirAll(dir, 0o755)
	case err != nil:
		return err
	case len(entries) > 0 && !force:
		return fmt.Errorf("%s: directory is not empty, %w", dir, ErrExists)
	}
	return nil
}

// Package atomicfile is Patina's one way of writing a file: the content goes
// to a temporary sibling in the same directory, is synced to disk, and is then
// renamed over the destination, so a crash, a kill or a full disk leaves
// either the previous complete file or the new complete file, never a partial
// one.
package atomicfile

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// Write creates path atomically with the bytes that fill writes. If fill or
// any step of writing fails, the temporary file is removed, the destination
// is left untouched and the error names the path.
func Write(path string, perm os.FileMode, fill func(w io.Writer) error) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return fmt.Errorf("%s: cannot create a temporary file beside it: %w", path, err)
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	bw := bufio.NewWriterSize(f, 1<<16)
	if err = fill(bw); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err = bw.Flush(); err != nil {
		return fmt.Errorf("%s: write: %w", path, err)
	}
	if err = f.Chmod(perm); err != nil {
		return fmt.Errorf("%s: chmod: %w", path, err)
	}
	if err = f.Sync(); err != nil {
		return fmt.Errorf("%s: sync: %w", path, err)
	}
	if err = f.Close(); err != nil {
		return fmt.Errorf("%s: close: %w", path, err)
	}
	if err = os.Rename(tmp, path); err != nil {
		return fmt.Errorf("%s: rename into place: %w", path, err)
	}
	// Sync the directory so the rename itself survives a power cut.
	if d, derr := os.Open(dir); derr == nil {
		d.Sync()
		d.Close()
	}
	return nil
}

// WriteBytes writes data to path atomically.
func WriteBytes(path string, data []byte, perm os.FileMode) error {
	return Write(path, perm, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

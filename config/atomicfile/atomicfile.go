// Package atomicfile writes files so that a reader sees either the old
// content or the whole new content, never a part of it: the data goes to a
// temporary file in the destination's directory, is flushed to disk, and is
// renamed over the destination. A failed write leaves no temporary file and
// leaves an existing destination as it was.
//
// Every file tonetrace writes — traces, recordings, stimuli, settings —
// goes through here, so an interrupted run never leaves a truncated file
// where a measurement used to be.
package atomicfile

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// Mode is the permission of the files Write creates.
const Mode = 0o644

// Write creates or replaces the file at path with what fill writes. fill
// receives a buffered writer; its error is returned unchanged (so callers
// keep their own error types), and the destination is not touched. Other
// errors name path and wrap the operating system's error.
func Write(path string, fill func(w io.Writer) error) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return fmt.Errorf("creating a file next to %s: %w", path, err)
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	bw := bufio.NewWriterSize(f, 1<<16)
	if err := fill(bw); err != nil {
		return err
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := f.Chmod(Mode); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := f.Sync(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := os.Rename(tmp, path); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	// Make the rename itself durable; not every system can sync a
	// directory, and the file is complete either way.
	if d, derr := os.Open(dir); derr == nil {
		d.Sync()
		d.Close()
	}
	return nil
}

package atomicfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"testing"
)

func TestWriteCreatesAndReplaces(t *testing.T) {
	path := filepath.Join(t.TempDir(), "out.csv")
	for _, content := range []string{"first\n", "second, longer content\n"} {
		err := Write(path, func(w io.Writer) error {
			_, err := io.WriteString(w, content)
			return err
		})
		if err != nil {
			t.Fatal(err)
		}
		got, err := os.ReadFile(path)
		if err != nil || string(got) != content {
			t.Fatalf("read %q, %v; want %q", got, err, content)
		}
		fi, _ := os.Stat(path)
		if fi.Mode().Perm() != Mode {
			t.Errorf("mode %v, want %v", fi.Mode().Perm(), os.FileMode(Mode))
		}
	}
	assertOnly(t, filepath.Dir(path), "out.csv")
}

func TestFailedFillKeepsOldFile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "keep.wav")
	if err := os.WriteFile(path, []byte("measured"), 0o644); err != nil {
		t.Fatal(err)
	}
	boom := errors.New("boom")
	err := Write(path, func(w io.Writer) error {
		io.WriteString(w, "half a file")
		return boom
	})
	if !errors.Is(err, boom) {
		t.Fatalf("error %v, want the fill's error", err)
	}
	got, _ := os.ReadFile(path)
	if string(got) != "measured" {
		t.Errorf("old file changed to %q", got)
	}
	assertOnly(t, dir, "keep.wav")
}

func TestMissingDirectory(t *testing.T) {
	path := filepath.Join(t.TempDir(), "no", "such", "dir", "x")
	err := Write(path, func(io.Writer) error { return nil })
	if err == nil || !errors.Is(err, os.ErrNotExist) {
		t.Fatalf("error %v, want one wrapping os.ErrNotExist", err)
	}
}

// assertOnly checks that dir holds exactly the named file: no temporary
// file is left behind.
func assertOnly(t *testing.T, dir, name string) {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(ents) != 1 || ents[0].Name() != name {
		var names []string
		for _, e := range ents {
			names = append(names, e.Name())
		}
		t.Errorf("directory holds %v, want only %s", names, name)
	}
}

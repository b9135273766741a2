package device

import (
	"os"
	"path/filepath"
	"slices"
	"syscall"
	"testing"
)

// fd2 returns the device and inode fd 2 refers to.
func fd2(t *testing.T) [2]uint64 {
	t.Helper()
	var st syscall.Stat_t
	if err := syscall.Fstat(2, &st); err != nil {
		t.Fatal(err)
	}
	return [2]uint64{st.Dev, st.Ino}
}

// TestCaptureStderr: what is written on fd 2 directly (as C code does)
// while fn runs comes back as lines, and fd 2 is the same file after.
func TestCaptureStderr(t *testing.T) {
	before := fd2(t)
	got := captureStderr(func() {
		syscall.Write(2, []byte("ALSA lib confmisc.c:165: Cannot get card index for 0\n\n  "))
		syscall.Write(2, []byte("jack server is not running\n"))
	})
	want := []string{"ALSA lib confmisc.c:165: Cannot get card index for 0", "jack server is not running"}
	if !slices.Equal(got, want) {
		t.Errorf("captured %q, want %q", got, want)
	}
	if after := fd2(t); after != before {
		t.Errorf("fd 2 is %v after the capture, was %v", after, before)
	}
	if got := captureStderr(func() {}); len(got) != 0 {
		t.Errorf("captured %q from silence", got)
	}
}

// TestRedirectStderr: between RedirectStderr and restore, fd 2 writes land
// in the file; after restore fd 2 is what it was.
func TestRedirectStderr(t *testing.T) {
	before := fd2(t)
	path := filepath.Join(t.TempDir(), "log")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	restore, err := RedirectStderr(f)
	if err != nil {
		t.Fatal(err)
	}
	syscall.Write(2, []byte("ALSA lib pcm.c: underrun occurred\n"))
	restore()
	if after := fd2(t); after != before {
		t.Errorf("fd 2 is %v after restore, was %v", after, before)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if string(b) != "ALSA lib pcm.c: underrun occurred\n" {
		t.Errorf("log file holds %q", b)
	}
}

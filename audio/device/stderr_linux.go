package device

import (
	"fmt"
	"io"
	"os"
	"strings"
	"sync"
	"syscall"
)

// stderrMu serialises the changes of the process's standard error (fd 2),
// which is one per process, between the captures and redirections below.
var stderrMu sync.Mutex

// captureStderr runs fn with fd 2 pointed at a pipe and returns the lines
// written to it meanwhile: the sound libraries under miniaudio (ALSA's
// plugins, JACK's client) print their probing there, which would
// otherwise clutter the terminal. If fd 2 cannot be redirected, fn runs
// anyway and nothing is captured. Go code must not write to os.Stderr
// while fn runs: it would be captured too.
func captureStderr(fn func()) []string {
	stderrMu.Lock()
	defer stderrMu.Unlock()
	r, w, err := os.Pipe()
	if err != nil {
		fn()
		return nil
	}
	defer r.Close()
	restore, err := point2At(int(w.Fd()))
	if err != nil {
		w.Close()
		fn()
		return nil
	}
	text := make(chan string, 1)
	go func() { // ends at EOF, when restore and Close drop the last write end
		b, _ := io.ReadAll(r)
		text <- string(b)
	}()
	fn()
	restore()
	w.Close()
	var lines []string
	for l := range strings.SplitSeq(<-text, "\n") {
		if l = strings.TrimSpace(l); l != "" {
			lines = append(lines, l)
		}
	}
	return lines
}

// RedirectStderr points the process's standard error (fd 2) at f until
// restore is called. A full-screen interface calls it for as long as it
// owns the terminal, so that what the sound libraries print on their own
// (an ALSA underrun report, say) goes to the log file and not across the
// screen. Errors meant for the user must be written after restore.
func RedirectStderr(f *os.File) (restore func(), err error) {
	stderrMu.Lock()
	defer stderrMu.Unlock()
	back, err := point2At(int(f.Fd()))
	if err != nil {
		return nil, fmt.Errorf("device: cannot send standard error to %s: %w", f.Name(), err)
	}
	return func() {
		stderrMu.Lock()
		defer stderrMu.Unlock()
		back()
	}, nil
}

// point2At makes fd 2 a copy of fd and returns the function that puts the
// old fd 2 back.
func point2At(fd int) (restore func(), err error) {
	saved, err := syscall.Dup(2)
	if err != nil {
		return nil, err
	}
	syscall.CloseOnExec(saved)
	if err := syscall.Dup3(fd, 2, 0); err != nil {
		syscall.Close(saved)
		return nil, err
	}
	return func() {
		_ = syscall.Dup3(saved, 2, 0)
		_ = syscall.Close(saved)
	}, nil
}

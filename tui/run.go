package tui

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"os"

	tea "github.com/charmbracelet/bubbletea"
)

// RunOptions say where the screen reads keys and draws.
type RunOptions struct {
	// In is where keys come from; default os.Stdin.
	In io.Reader
	// Out is the terminal to draw on; default os.Stdout. Use os.Stderr
	// when stdout carries data.
	Out io.Writer
	// Inline draws in the normal screen buffer instead of the alternate
	// one (the default), leaving the last frame in the scrollback.
	Inline bool
}

// Run shows the screen until the user quits, ctx is cancelled or a fatal
// ErrMsg arrives, and restores the terminal in every case (also after a
// panic in the model, which Bubble Tea turns into an error).
//
// It returns nil when the user quit, the fatal error of an ErrMsg, or
// ctx's error when the context ended the screen. The caller then stops
// the measurement: cancel the context, stop the stream, close the
// device, close the events channel.
func Run(ctx context.Context, m *Model, o RunOptions) error {
	opts := []tea.ProgramOption{tea.WithContext(ctx), tea.WithFPS(m.opt.FPS)}
	if o.In != nil {
		opts = append(opts, tea.WithInput(o.In))
	}
	if o.Out != nil {
		opts = append(opts, tea.WithOutput(o.Out))
	}
	if !o.Inline {
		opts = append(opts, tea.WithAltScreen())
	}
	_, err := tea.NewProgram(m, opts...).Run()
	switch {
	case m.Err() != nil:
		return m.Err()
	case err == nil:
		return nil
	case errors.Is(err, tea.ErrProgramKilled) && ctx.Err() != nil:
		return ctx.Err()
	}
	return fmt.Errorf("tui: %w", err)
}

// LogTo opens (or creates) the log file at path for appending and returns
// a logger writing to it at the given level, and the file to close after
// the screen ends. The screen never logs to the terminal.
func LogTo(path string, level slog.Level) (*slog.Logger, io.Closer, error) {
	f, err := os.OpenFile(path, os.O_APPEND|os.O_CREATE|os.O_WRONLY, 0o644)
	if err != nil {
		return nil, nil, fmt.Errorf("tui: cannot open the log file: %w; choose a writable path", err)
	}
	return slog.New(slog.NewTextHandler(f, &slog.HandlerOptions{Level: level})), f, nil
}

// Package tui is tonetrace's live monitor screen: a Bubble Tea model that
// shows a frequency response as it is measured, the health of both inputs,
// a cursor readout with the trace's parameters, and the keys to steer the
// measurement.
//
// At the minimum size of 80×24 the screen reads like this (without
// colour; a stepped sweep of a first-order RC low-pass 40 points into its
// third pass over the previous sweep, with the prediction for another
// capacitor and the cursor on the −3 dB corner):
//
//	 stepped sweep · running · out −30 dBFS, cap −10 · 40/61 · virtual bench 48k
//	 dB Gain                                                             model  live
//	  0┤⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠶⠶⠦⠤⠤⠤⠤⢤⣤⣤⣀⣀⣀⣀┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┼┈┈┈┈┈┈┈
//	   │                 ┊                        ⠈⠉⠉⠛⠛⠳⠶⠦⣀⣀⡀               ┊
//	   │                 ┊                         ┃      ⠈⠉⠙⠳⠶⣒⣤⣄⣀⣀        ┊
//	   │                 ┊                         ┃             ⠈⠑⠒⠛⠶⢖⣢⣤⣀  ┊
//	-20┤┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┼┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┃┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈⠉⠛⠫⠵⠶⣤⣀⣀⡀┈┈
//	   │                 ┊                         ┃                        ┊  ⠉⠑⠚⠛⠶
//	deg Phase
//	  0┤⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠒⠲⠦⠤⠤⠤⠤⠤⠤⠤⣤⣄⣀⣀⣀⣀⡀┈┈┈┈┈┈┈┈┈┈┈┈┈┈┃┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┼┈┈┈┈┈┈┈
//	   │                 ┊         ⠉⠉⠙⠛⠛⠒⠲⢦⣤⣤⣄⣀⣀   ┃                        ┊
//	-45┤┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┼┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈⠈⠉⠉⠛⠶⠶⢦⣤⣀⣀⡀┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┼┈┈┈┈┈┈┈
//	   │                 ┊                         ┃ ⠉⠉⠙⠛⠓⢤⣤⣄⣀⣀⣀            ┊
//	-90┤┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┼┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┃┈┈┈┈┈┈┈┈┈⠈⠉⠉⠉⠙⠛⠛⠒⠒⠒⠒⠒⠶⠶⠦⠤⠤⠤⠤⠤⠤⠤⠤
//	 Hz 20        50    100     200       500      1k     2k        5k     10k   20k
//	── Inputs · RMS, peak dBFS ─────────────── Cursor · live ───────────────────────
//	reference █████▊│··  −33.0  −30.0       tune R1 = 10.00 kΩ (E12) [ ] step, tab…
//	response  █████▍···  −36.0  −33.0       1.061 kHz  −3.02 dB ±0.01  −45.0° ±0.1
//	latency 12.3 ms  SNR 62 dB  0 dropouts  delay 75.18 µs
//	✓ the inputs look right                 vs model +0.86 dB +5.2° (source 100 Ω,…
//	                                        low-pass, passband 0.00 dB
//	                                        −3 dB at 1.061 kHz (−45.0°)
//	                                        … 2 more lines
//	 cursor at the −3 dB corner, 1.061 kHz
//
// The header line names the way of measuring, its state, the output level
// and its cap, the sweep's progress and the device. The plot shows gain
// above phase on one logarithmic frequency axis with several traces at
// once: the live measurement, stored references, the prediction from a
// netlist and the difference between live and the newest reference. Below
// it (or beside it on wide screens) the Inputs pane shows each input's
// level as a bar with RMS and peak in dBFS and says in plain words what is
// wrong and how to fix it; the Cursor pane reads gain, phase, group delay
// and uncertainty at the cursor and the trace's parameters (see package
// tonetrace/dsp/extract). The bottom line shows messages or the main keys;
// ? lists them all.
//
// # Keys
//
// space starts and pauses, x mutes at once (on every screen), + and −
// step the output level (never past its cap; the first raise above the
// default shows a caution), m and M step through the ways of measuring
// (stepped sweep, live multitone, single tone, any signal). ← → (h l)
// move the cursor a column, H L ten; p, n and c put it on the peak, the
// notch and the next −3 dB corner. r stores the live trace as a
// reference (R forgets them), o, e and d show or hide the references,
// the prediction and live − reference; a switches between automatic and
// fixed scales, w between wrapped and unwrapped phase. s saves the live
// trace as CSV, S a picture (text, SVG, PNG). On the simulated bench tab
// picks a component and [ ] step it through its E-series while the
// response forms. ? lists every key; q and ctrl+c quit. See
// [DefaultKeyMap].
//
// In the single-tone mode the body shows the last reading in large digits
// with a history strip, and the cursor keys move the tone: a hundredth of
// a decade, or (H L) to the next exact third-octave midband
// 1 kHz·10^(k/10).
//
// # Wiring
//
// The model never touches audio. Whatever drives the measurement sends
// the messages of this package ([TraceMsg], [PointMsg], [StatusMsg],
// [ProgressMsg], [PredictionMsg], [ToneMsg], [StateMsg], [InfoMsg],
// [ErrMsg]) on a channel given in [Options.Events]; [Listen] receives them
// one at a time, so the sender only ever blocks on the channel's buffer
// (or uses a non-blocking send). The model asks for actions through a
// [Controller], whose methods must return at once.
//
//	logger, logFile, err := tui.LogTo(logPath, slog.LevelInfo)
//	…
//	events := make(chan tea.Msg, 64)
//	go adapt(engineEvents, events) // engine events → tui messages; close(events) at the end
//	m := tui.New(ctl, tui.Options{
//		Events:  events,
//		Logger:  logger,
//		Profile: tui.ProfileFor(os.Stdout, noColorFlag),
//		State:   tui.StateRunning,
//		Info:    tui.InfoMsg{Device: name, Rate: rate, Demo: demo, From: 20, To: 20e3},
//	})
//	err = tui.Run(ctx, m, tui.RunOptions{}) // alternate screen, keys from stdin
//	// then: cancel ctx, stop the stream, close the device, logFile.Close()
//
// [Run] puts the screen on the alternate buffer and restores the terminal
// when it ends, whatever the reason; it returns the fatal error of an
// [ErrMsg] so the caller can print it on the restored terminal. Frames are
// drawn at most [Options.FPS] times a second (30 by default) and [Model.View]
// returns the last frame until new data arrives. Logs go to
// [Options.Logger]; the model never writes to the terminal itself.
package tui

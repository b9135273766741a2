package tui

import (
	"fmt"
	"math"

	tea "github.com/charmbracelet/bubbletea"
)

// levelEps is the tolerance in dB below which two levels count as equal.
const levelEps = 1e-9

// cautionText is shown on the first raise of the output above its default.
const cautionText = "Caution: louder tones can harm hearing, tweeters and inputs; x mutes at once"

// handleKey carries out a key press and returns a command (saving runs
// in one).
func (m *Model) handleKey(msg tea.KeyMsg) tea.Cmd {
	k := &m.keys
	// Quit and mute work everywhere, whatever the screen shows.
	switch {
	case k.Quit.Matches(msg):
		m.log.Info("quit")
		m.quit = true
		return nil
	case k.Mute.Matches(msg):
		m.toggleMute()
		return nil
	}
	m.note = ""
	if m.screen == screenHelp {
		// Any key closes the help; only its own keys do nothing more.
		m.screen = screenMain
		return nil
	}
	switch {
	case k.Help.Matches(msg):
		m.screen = screenHelp
	case k.Close.Matches(msg):
		// The note is cleared above.
	case k.StartPause.Matches(msg):
		m.startPause()
	case k.Mode.Matches(msg):
		m.setMode((m.mode + 1) % numModes)
	case k.ModeBack.Matches(msg):
		m.setMode((m.mode + numModes - 1) % numModes)
	case k.LevelUp.Matches(msg):
		m.levelUp()
	case k.LevelDown.Matches(msg):
		m.levelDown()
	case k.Left.Matches(msg):
		m.moveCursor(-1, false)
	case k.Right.Matches(msg):
		m.moveCursor(1, false)
	case k.FastLeft.Matches(msg):
		m.moveCursor(-1, true)
	case k.FastRight.Matches(msg):
		m.moveCursor(1, true)
	case k.Peak.Matches(msg):
		m.jumpPeak()
	case k.Notch.Matches(msg):
		m.jumpNotch()
	case k.Corner.Matches(msg):
		m.jumpCorner()
	case k.Store.Matches(msg):
		m.storeReference()
	case k.Forget.Matches(msg):
		n := len(m.refs)
		m.refs = m.refs[:0]
		m.dataVer++
		m.setNote(fmt.Sprintf("forgot %d reference trace%s", n, plural(n)), noteInfo)
	case k.Refs.Matches(msg):
		m.showRefs = !m.showRefs
		m.setNote("references "+shownHidden(m.showRefs), noteInfo)
	case k.Prediction.Matches(msg):
		m.showPred = !m.showPred
		m.setNote("prediction "+shownHidden(m.showPred), noteInfo)
	case k.Difference.Matches(msg):
		m.showDiff = !m.showDiff
		m.setNote("live − reference "+shownHidden(m.showDiff), noteInfo)
		if m.showDiff && len(m.refs) == 0 {
			m.setNote("live − reference needs a stored reference: press "+k.Store.Help+" first", noteWarn)
		}
	case k.Scale.Matches(msg):
		m.fixedScale = !m.fixedScale
		if m.fixedScale {
			m.setNote(fmt.Sprintf("fixed scales: %s to %s dB, %s to %s°", fixed(m.opt.GainMin, 0, false),
				fixed(m.opt.GainMax, 0, true), fixed(m.opt.PhaseMin, 0, false), fixed(m.opt.PhaseMax, 0, true)), noteInfo)
		} else {
			m.setNote("automatic scales", noteInfo)
		}
	case k.Wrap.Matches(msg):
		m.wrapped = !m.wrapped
		if m.wrapped {
			m.setNote("phase wrapped to ±180°", noteInfo)
		} else {
			m.setNote("phase unwrapped", noteInfo)
		}
	case k.SaveTrace.Matches(msg):
		return m.saveTrace()
	case k.SavePicture.Matches(msg):
		return m.savePicture()
	case k.NextPart.Matches(msg):
		m.selectPart(1)
	case k.PrevPart.Matches(msg):
		m.selectPart(-1)
	case k.ValueUp.Matches(msg):
		m.stepPart(1)
	case k.ValueDown.Matches(msg):
		m.stepPart(-1)
	}
	return nil
}

func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}

func shownHidden(on bool) string {
	if on {
		return "shown"
	}
	return "hidden"
}

func (m *Model) toggleMute() {
	m.muted = !m.muted
	m.ctl.Mute(m.muted)
	m.log.Info("mute", "muted", m.muted)
	if m.muted {
		m.setNote("output muted; "+m.keys.Mute.Help+" restores it", noteWarn)
	} else {
		m.setNote("output restored to "+fixed(m.level, 1, false)+" dBFS", noteInfo)
	}
}

func (m *Model) startPause() {
	pause := m.run == StateRunning
	if err := m.ctl.Pause(pause); err != nil {
		m.fail("start/pause", err)
		return
	}
	if pause {
		m.run = StatePaused
	} else {
		m.run = StateRunning
	}
	m.log.Info("state", "state", m.run)
}

func (m *Model) setMode(next Mode) {
	if err := m.ctl.SetMode(next); err != nil {
		m.fail("mode", err)
		return
	}
	m.log.Info("mode", "mode", next)
	m.mode = next
	m.live.clear()
	m.liveChanged()
	m.progress = ProgressMsg{}
	m.tone = m.tone[:0]
	if next == ModeTone {
		m.cursor = math.Min(math.Max(toneStep(m.cursor, 0, 100), m.from), m.to)
		if err := m.ctl.SetToneFreq(m.cursor); err != nil {
			m.fail("tone", err)
		}
	}
}

// fail shows and logs a controller error.
func (m *Model) fail(what string, err error) {
	m.log.Error(what, "err", err)
	m.setNote(err.Error(), noteAlarm)
}

func (m *Model) refreshLevel() {
	m.level, m.levelCap, m.levelDef = m.ctl.Level()
}

func (m *Model) levelUp() {
	m.refreshLevel()
	if m.level >= m.levelCap-levelEps {
		m.setNote(fmt.Sprintf("the output is at its cap of %s dBFS; raise the cap in the settings only when the circuit and the inputs can take it",
			fixed(m.levelCap, 1, false)), noteWarn)
		return
	}
	target := math.Min(m.level+m.opt.LevelStep, m.levelCap)
	if err := m.ctl.SetLevel(target); err != nil {
		m.fail("level", err)
		return
	}
	m.refreshLevel()
	m.log.Info("level", "dBFS", m.level)
	if m.level > m.levelDef+levelEps && !m.cautioned {
		m.cautioned = true
		m.setNote(cautionText, noteWarn)
	}
}

func (m *Model) levelDown() {
	m.refreshLevel()
	if m.level <= m.opt.LevelMin+levelEps {
		m.setNote(fmt.Sprintf("the output is at its lowest level of %s dBFS", fixed(m.opt.LevelMin, 1, false)), noteInfo)
		return
	}
	target := math.Max(m.level-m.opt.LevelStep, m.opt.LevelMin)
	if err := m.ctl.SetLevel(target); err != nil {
		m.fail("level", err)
		return
	}
	m.refreshLevel()
	m.log.Info("level", "dBFS", m.level)
}

// moveCursor moves the cursor one column (fast: ten columns) in the plot,
// or, in the single-tone mode, the tone one hundredth of a decade (fast:
// one third-octave band).
func (m *Model) moveCursor(dir int, fast bool) {
	if m.mode == ModeTone {
		d := 100
		if fast {
			d = 10
		}
		f := toneStep(m.cursor, dir, d)
		f = math.Min(math.Max(f, m.from), m.to)
		if err := m.ctl.SetToneFreq(f); err != nil {
			m.fail("tone", err)
			return
		}
		m.cursor = f
		m.tone = m.tone[:0]
		return
	}
	n := dir
	if fast {
		n *= 10
	}
	x := m.xmap
	if x.Width <= 0 {
		m.cursor = math.Min(math.Max(m.cursor*math.Pow(10, float64(n)/100), m.from), m.to)
		return
	}
	col, _ := x.Col(m.cursor)
	col = min(max(col+n, x.Left), x.Left+x.Width-1)
	m.cursor = x.Freq(col)
}

func (m *Model) jumpTo(f float64, what string) {
	if m.mode == ModeTone {
		if err := m.ctl.SetToneFreq(f); err != nil {
			m.fail("tone", err)
			return
		}
		m.tone = m.tone[:0]
	}
	m.cursor = f
	m.setNote("cursor at the "+what+", "+hz(f), noteInfo)
}

func (m *Model) noFeature(what string) {
	if m.primary() == nil {
		m.setNote("no trace yet: start the measurement with "+m.keys.StartPause.Help, noteWarn)
		return
	}
	m.setNote("no "+what+" in the "+m.primary().name+" trace", noteWarn)
}

func (m *Model) jumpPeak() {
	m.analyse()
	if m.paramsErr != nil || !m.params.Peak.Found() {
		m.noFeature("peak")
		return
	}
	m.jumpTo(m.params.Peak.Freq, "peak")
}

func (m *Model) jumpNotch() {
	m.analyse()
	if m.paramsErr != nil || !m.params.Notch.Found() {
		m.noFeature("notch")
		return
	}
	m.jumpTo(m.params.Notch.Freq, "notch")
}

// jumpCorner moves to the next corner above the cursor, wrapping around
// to the lowest.
func (m *Model) jumpCorner() {
	m.analyse()
	cs := m.params.Corners
	if m.paramsErr != nil || len(cs) == 0 {
		m.noFeature("−3 dB corner")
		return
	}
	next := cs[0]
	for _, c := range cs {
		if c.Freq > m.cursor*(1+1e-6) {
			next = c
			break
		}
	}
	m.jumpTo(next.Freq, "−3 dB corner")
}

func (m *Model) storeReference() {
	if len(m.liveS.points) == 0 {
		m.setNote("nothing to store yet: the live trace is empty", noteWarn)
		return
	}
	m.refCount++
	var s *series
	if len(m.refs) == MaxReferences {
		s = m.refs[0] // reuse the oldest's buffers
		copy(m.refs, m.refs[1:])
		m.refs = m.refs[:MaxReferences-1]
	} else {
		s = new(series)
	}
	s.name = fmt.Sprintf("ref %d", m.refCount)
	m.refs = append(m.refs, s)
	m.restyleRefs()
	s.set(m.liveS.points)
	m.dataVer++
	m.showRefs = true
	m.log.Info("reference stored", "name", s.name, "points", len(s.points))
	m.setNote(fmt.Sprintf("stored the live trace as %s (%d points)", s.name, len(s.points)), noteInfo)
}

// restyleRefs gives each reference the colour of its slot.
func (m *Model) restyleRefs() {
	for i, r := range m.refs {
		r.style = styleRef + i
		r.curve.Style, r.curve.Name = r.style, r.name
	}
}

func (m *Model) selectPart(dir int) {
	if len(m.tunables) == 0 {
		m.setNote("no components to tune: tuning works on the simulated bench (demo)", noteInfo)
		return
	}
	m.part = (m.part + dir + len(m.tunables)) % len(m.tunables)
	t := m.tunables[m.part]
	m.setNote("tuning "+t.Name+" = "+siValue(t.Value, t.Unit), noteInfo)
}

func (m *Model) stepPart(dir int) {
	if len(m.tunables) == 0 {
		m.setNote("no components to tune: tuning works on the simulated bench (demo)", noteInfo)
		return
	}
	m.part = min(m.part, len(m.tunables)-1)
	t := m.tunables[m.part]
	v := stepValue(t.Value, t.Series, dir)
	if math.IsNaN(v) {
		m.setNote(t.Name+" has no value to step from", noteWarn)
		return
	}
	if err := m.ctl.SetValue(t.Name, v); err != nil {
		m.fail("tune", err)
		return
	}
	m.log.Info("tune", "part", t.Name, "value", v)
	m.tunables = m.ctl.Tunables()
	m.part = min(m.part, max(len(m.tunables)-1, 0))
	m.setNote(t.Name+" = "+siValue(v, t.Unit), noteInfo)
}

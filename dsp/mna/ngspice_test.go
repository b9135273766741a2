package mna

import (
	"bufio"
	"fmt"
	"math"
	"math/cmplx"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"tonetrace/dsp/netlist"
)

// Tolerances against ngspice's AC analysis, which writes 8 significant
// digits with numdgt=7 and stands in for the ideal amplifier with a VCVS
// of gain spiceOpAmpGain (a relative error near 1e−9).
const (
	tolSpiceDB     = 0.001 // dB
	tolSpiceDeg    = 0.01  // degrees
	spiceOpAmpGain = 1e9
)

// ngspicePath returns the ngspice executable, skipping the test when it
// is absent unless TONETRACE_REQUIRE_TOOLS=1.
func ngspicePath(t *testing.T) string {
	t.Helper()
	p, err := exec.LookPath("ngspice")
	if err != nil {
		if os.Getenv("TONETRACE_REQUIRE_TOOLS") == "1" {
			t.Fatalf("ngspice not found and TONETRACE_REQUIRE_TOOLS=1: %v (install the Debian package ngspice)", err)
		}
		t.Skip("ngspice not installed (Debian package ngspice); set TONETRACE_REQUIRE_TOOLS=1 to require it")
	}
	return p
}

// spiceNode maps a node name to ngspice, with ground as 0.
func spiceNode(name string) string {
	if isGround(strings.ToLower(name)) {
		return "0"
	}
	return name
}

// spiceDeck writes the ngspice batch deck for n in fixture fx, in the
// form of REFERENCES §8: an AC source of 1 V behind the source resistance,
// the load R ∥ C, each ideal amplifier as a VCVS of gain spiceOpAmpGain
// from its inputs to its output (referred to ground), and an AC sweep
// written with wrdata to outPath.
func spiceDeck(n *netlist.Netlist, fx Fixture, outPath string) string {
	var b strings.Builder
	num := func(v float64) string { return strconv.FormatFloat(v, 'e', 17, 64) }
	in, out := spiceNode(n.In), spiceNode(n.Out)
	fmt.Fprintf(&b, "* %s\n", n.Title)
	if fx.SourceOhms == 0 {
		fmt.Fprintf(&b, "Vtt_src %s 0 AC 1\n", in)
	} else {
		fmt.Fprintf(&b, "Vtt_src tt_src 0 AC 1\nRtt_src tt_src %s %s\n", in, num(fx.SourceOhms))
	}
	for _, e := range n.Elements {
		nodes := make([]string, len(e.Nodes))
		for i, v := range e.Nodes {
			nodes[i] = spiceNode(v)
		}
		switch e.Kind {
		case netlist.Resistor, netlist.Capacitor, netlist.Inductor:
			fmt.Fprintf(&b, "%s %s %s %s\n", e.Name, nodes[0], nodes[1], num(e.Value))
		case netlist.VCVS:
			fmt.Fprintf(&b, "%s %s %s %s %s %s\n", e.Name, nodes[0], nodes[1], nodes[2], nodes[3], num(e.Value))
		case netlist.OpAmp:
			fmt.Fprintf(&b, "Ett_%s %s 0 %s %s %s\n", e.Name, nodes[0], nodes[1], nodes[2], num(spiceOpAmpGain))
		}
	}
	if fx.loaded() {
		fmt.Fprintf(&b, "Rtt_load %s 0 %s\n", out, num(fx.LoadOhms))
	}
	if fx.LoadFarads > 0 {
		fmt.Fprintf(&b, "Ctt_load %s 0 %s\n", out, num(fx.LoadFarads))
	}
	fmt.Fprintf(&b, ".control\nset wr_singlescale\nset wr_vecnames\noption numdgt=7\nac dec 50 10 10Meg\nwrdata %s v(%s)\nquit\n.endc\n.end\n", outPath, out)
	return b.String()
}

// spicePoint is one row of wrdata output.
type spicePoint struct {
	f float64
	h complex128
}

// readWrdata parses wrdata's columns frequency, Re, Im, skipping the
// header row.
func readWrdata(path string) ([]spicePoint, error) {
	file, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer file.Close()
	var pts []spicePoint
	sc := bufio.NewScanner(file)
	for sc.Scan() {
		fields := strings.Fields(sc.Text())
		if len(fields) != 3 {
			continue
		}
		var v [3]float64
		ok := true
		for i, s := range fields {
			if v[i], err = strconv.ParseFloat(s, 64); err != nil {
				ok = false
				break
			}
		}
		if ok {
			pts = append(pts, spicePoint{v[0], complex(v[1], v[2])})
		}
	}
	return pts, sc.Err()
}

// spiceCases are the networks checked against ngspice: passive and
// active, with and without source resistance and load.
func spiceCases() []struct {
	n  *netlist.Netlist
	fx Fixture
} {
	// Tow-Thomas biquad (three amplifiers), low-pass output, f0 ≈ 1 kHz,
	// Q = 3.
	const rt, ct = 10e3, 15.9e-9
	towThomas := nl("Tow-Thomas biquad",
		el("Rin", "in n1", rt), el("Rq", "bp n1", 3*rt), el("C1", "bp n1", ct), el("Rfb", "inv n1", rt),
		el("U1", "bp 0 n1", 0),
		el("R2", "bp n2", rt), el("C2", "out n2", ct), el("U2", "out 0 n2", 0),
		el("R3", "out n3", rt), el("R4", "inv n3", rt), el("U3", "inv 0 n3", 0))
	// Multiple-feedback band-pass, f0 ≈ 1.6 kHz.
	mfb := nl("multiple-feedback band-pass",
		el("R1", "in a", 10e3), el("R2", "a 0", 1e3), el("C1", "a out", 10e-9), el("C2", "a inv", 10e-9),
		el("R3", "inv out", 100e3), el("U1", "out 0 inv", 0))
	// Fourth-order Sallen-Key with gain: two non-inverting stages.
	sk4 := nl("Sallen-Key fourth order with gain",
		el("R11", "in a1", 12e3), el("R21", "a1 p1", 12e3), el("C11", "a1 m", 10e-9), el("C21", "p1 0", 10e-9),
		el("U1", "m p1 g1", 0), el("Rf1", "m g1", 3.3e3), el("Rg1", "g1 0", 10e3),
		el("R12", "m a2", 12e3), el("R22", "a2 p2", 12e3), el("C12", "a2 out", 10e-9), el("C22", "p2 0", 10e-9),
		el("U2", "out p2 g2", 0), el("Rf2", "out g2", 15e3), el("Rg2", "g2 0", 10e3))
	// Fifth-order Butterworth LC ladder for 600 Ω at 3 kHz, g = 0.618,
	// 1.618, 2, 1.618, 0.618, with a gain-of-2 VCVS after it.
	const r0, fl = 600.0, 3000.0
	wl := 2 * math.Pi * fl
	gs := [5]float64{2 * math.Sin(math.Pi/10), 2 * math.Sin(3*math.Pi/10), 2, 2 * math.Sin(3*math.Pi/10), 2 * math.Sin(math.Pi/10)}
	ladder := nl("LC ladder fifth order",
		el("C1", "in 0", gs[0]/(wl*r0)), el("L2", "in b", gs[1]*r0/wl), el("C3", "b 0", gs[2]/(wl*r0)),
		el("L4", "b c", gs[3]*r0/wl), el("C5", "c 0", gs[4]/(wl*r0)), el("Rt", "c 0", r0),
		el("E1", "out 0 c 0", 2))
	// Bridged network with a floating VCVS output and an inductor.
	bridged := nl("bridged RLC with floating VCVS",
		el("R1", "in a", 1e3), el("C1", "a 0", 100e-9), el("E1", "b c a 0", 2),
		el("R2", "c 0", 2.2e3), el("R3", "b out", 4.7e3), el("L1", "out 0", 10e-3),
		el("C2", "out c", 47e-9), el("R4", "out 0", 10e3))
	// Twin-T notch from REFERENCES §5 behind a line output into a scope.
	twinT := nl("twin-T loaded",
		el("R1", "in a", 10e3), el("R2", "a out", 10e3), el("C3", "a 0", 30e-9),
		el("C1", "in b", 15e-9), el("C2", "b out", 15e-9), el("R3", "b 0", 5e3))
	return []struct {
		n  *netlist.Netlist
		fx Fixture
	}{
		{towThomas, Fixture{SourceOhms: 50, LoadOhms: 10e3, LoadFarads: 220e-12}},
		{mfb, Fixture{}},
		{sk4, Fixture{SourceOhms: 100, LoadOhms: 47e3, LoadFarads: 100e-12}},
		{ladder, Fixture{SourceOhms: r0, LoadOhms: 10e3}},
		{bridged, Fixture{SourceOhms: 600, LoadFarads: 1e-9}},
		{twinT, Fixture{SourceOhms: 100, LoadOhms: 47e3, LoadFarads: 100e-12}},
	}
}

// TestAgainstNgspice compares H over 10 Hz – 10 MHz with ngspice-39's AC
// analysis (Debian package ngspice, REFERENCES §8) for networks of 6 to
// 14 elements, including three active filters.
func TestAgainstNgspice(t *testing.T) {
	bin := ngspicePath(t)
	for _, c := range spiceCases() {
		t.Run(c.n.Title, func(t *testing.T) {
			dir := t.TempDir()
			outPath := filepath.Join(dir, "out.txt")
			deck := filepath.Join(dir, "deck.cir")
			if err := os.WriteFile(deck, []byte(spiceDeck(c.n, c.fx, outPath)), 0o644); err != nil {
				t.Fatal(err)
			}
			cmd := exec.Command(bin, "-b", deck)
			cmd.Dir = dir
			if msg, err := cmd.CombinedOutput(); err != nil {
				t.Fatalf("ngspice: %v\n%s", err, msg)
			}
			pts, err := readWrdata(outPath)
			if err != nil {
				t.Fatal(err)
			}
			if len(pts) != 301 { // 6 decades at 50 per decade, both ends
				t.Fatalf("ngspice wrote %d points, want 301", len(pts))
			}
			s := NewSolver(mustBuild(t, c.n, c.fx))
			worstDB, worstDeg := 0.0, 0.0
			for _, p := range pts {
				h := mustResponse(t, s, p.f)
				eDB := math.Abs(db(h) - db(p.h))
				eDeg := math.Abs(wrapDeg(deg(h) - deg(p.h)))
				worstDB, worstDeg = max(worstDB, eDB), max(worstDeg, eDeg)
				if eDB > tolSpiceDB || eDeg > tolSpiceDeg || math.IsNaN(eDB+eDeg) {
					t.Errorf("%g Hz: %.6f dB %.5f°, ngspice %.6f dB %.5f°", p.f, db(h), deg(h), db(p.h), deg(p.h))
				}
			}
			t.Logf("%d points, worst difference %.2g dB, %.2g° (|H| from %.3g to %.3g)", len(pts), worstDB, worstDeg,
				cmplx.Abs(pts[0].h), cmplx.Abs(pts[len(pts)-1].h))
		})
	}
}

package fit

import (
	"encoding/json"
	"math"
	"testing"
)

// TestMarshalJSON checks the exact form the command line prints (the
// shape agreed for the CLI: components with name, value, uncertainty,
// e12, e24, e96; rms_db; rms_deg), and that an uncertainty that cannot be
// estimated becomes null, as JSON has no NaN or Inf (RFC 8259 §6).
func TestMarshalJSON(t *testing.T) {
	r := Result{
		Components: []Component{
			{Name: "C1", Value: 2.2e-8, Uncertainty: 4e-11, E12: 2.2e-8, E24: 2.2e-8, E96: 2.21e-8},
			{Name: "R1", Value: 4620, Uncertainty: math.Inf(1), E12: 4700, E24: 4700, E96: 4640},
		},
		RMSdB: 0.043, RMSdeg: 0.46, Iterations: 6, Converged: true,
	}
	got, err := json.Marshal(r)
	if err != nil {
		t.Fatal(err)
	}
	want := `{"components":[{"name":"C1","value":2.2e-8,"uncertainty":4e-11,"e12":2.2e-8,"e24":2.2e-8,"e96":2.21e-8},` +
		`{"name":"R1","value":4620,"uncertainty":null,"e12":4700,"e24":4700,"e96":4640}],"rms_db":0.043,"rms_deg":0.46}`
	if string(got) != want {
		t.Errorf("got  %s\nwant %s", got, want)
	}
	// The form reads back into plain Go types.
	var back struct {
		Components []struct {
			Name        string   `json:"name"`
			Value       float64  `json:"value"`
			Uncertainty *float64 `json:"uncertainty"`
		} `json:"components"`
		RMSdB float64 `json:"rms_db"`
	}
	if err := json.Unmarshal(got, &back); err != nil {
		t.Fatal(err)
	}
	if back.Components[0].Value != 2.2e-8 || back.Components[1].Uncertainty != nil || back.RMSdB != 0.043 {
		t.Errorf("read back %+v", back)
	}
	empty, err := json.Marshal(Result{})
	if err != nil || string(empty) != `{"components":[],"rms_db":0,"rms_deg":0}` {
		t.Errorf("empty result: %s, %v", empty, err)
	}
}

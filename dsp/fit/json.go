package fit

import (
	"encoding/json"
	"math"
)

// jsonNumber is a float64 that encodes NaN and ±Inf as null, which JSON
// cannot otherwise carry.
type jsonNumber float64

func (v jsonNumber) MarshalJSON() ([]byte, error) {
	f := float64(v)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return []byte("null"), nil
	}
	return json.Marshal(f)
}

type jsonComponent struct {
	Name        string     `json:"name"`
	Value       jsonNumber `json:"value"`
	Uncertainty jsonNumber `json:"uncertainty"`
	E12         jsonNumber `json:"e12"`
	E24         jsonNumber `json:"e24"`
	E96         jsonNumber `json:"e96"`
}

type jsonResult struct {
	Components []jsonComponent `json:"components"`
	RMSdB      jsonNumber      `json:"rms_db"`
	RMSdeg     jsonNumber      `json:"rms_deg"`
}

// MarshalJSON writes the result in the form the command line prints:
//
//	{"components":[{"name":"C1","value":2.2e-08,"uncertainty":4.1e-11,
//	  "e12":2.2e-08,"e24":2.2e-08,"e96":2.21e-08}],"rms_db":0.043,"rms_deg":0.46}
//
// Values are in SI units; an uncertainty that cannot be estimated (NaN or
// +Inf) is written as null. Iterations, convergence and the χ² are not
// part of this form.
func (r Result) MarshalJSON() ([]byte, error) {
	out := jsonResult{
		Components: make([]jsonComponent, len(r.Components)),
		RMSdB:      jsonNumber(r.RMSdB),
		RMSdeg:     jsonNumber(r.RMSdeg),
	}
	for i, c := range r.Components {
		out.Components[i] = jsonComponent{
			Name:        c.Name,
			Value:       jsonNumber(c.Value),
			Uncertainty: jsonNumber(c.Uncertainty),
			E12:         jsonNumber(c.E12),
			E24:         jsonNumber(c.E24),
			E96:         jsonNumber(c.E96),
		}
	}
	return json.Marshal(out)
}

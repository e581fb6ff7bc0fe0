package web

import (
	"encoding/json"
	"fmt"
	"sort"
	"strings"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// JobData is the job page: the manifest.
type JobData struct {
	Job     *fleet.Job
	Flights []store.ManifestFlight
	Hours   float64
}

// JobPage builds the job page from its manifest.
func JobPage(m *store.Manifest) JobData {
	d := JobData{Job: m.Job, Flights: m.Flights}
	for _, f := range m.Flights {
		d.Hours += f.Hours
	}
	return d
}

// Metric is one named figure of a flight.
type Metric struct{ Name, Value string }

// FlightData is the flight page.
type FlightData struct {
	Flight       *store.FlightDetail
	AirframeCode string
	JobCode      string
	Metrics      []Metric
}

// FlightPage builds the flight page; the log's figures are listed by name
// as the analysis stored them (units are in the names).
func FlightPage(f *store.FlightDetail, airframeCode, jobCode string) FlightData {
	d := FlightData{Flight: f, AirframeCode: airframeCode, JobCode: jobCode}
	var m map[string]any
	if json.Unmarshal(f.Metrics, &m) == nil {
		for k, v := range m {
			var s string
			switch x := v.(type) {
			case nil:
				continue
			case float64:
				s = strings.TrimRight(strings.TrimRight(fmt.Sprintf("%.3f", x), "0"), ".")
			case string:
				s = x
			default:
				b, _ := json.Marshal(x)
				if len(b) > 160 {
					continue // series and per-bin detail belong to the API
				}
				s = string(b)
			}
			d.Metrics = append(d.Metrics, Metric{Name: strings.ReplaceAll(k, "_", " "), Value: s})
		}
		sort.Slice(d.Metrics, func(i, j int) bool { return d.Metrics[i].Name < d.Metrics[j].Name })
	}
	return d
}

package health

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"reflect"
	"testing"

	gojson "github.com/goccy/go-json"
)

// Stored rpm bins decode with goccy/go-json to exactly what encoding/json
// (the reference) gives: random values over many magnitudes, written as the
// analysis writes them (encoding/json), thrust sometimes null, and bins
// written by hand with exponents and integers.
func TestBinsDecodeAsStdlib(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 9))
	val := func() float64 { return rng.NormFloat64() * math.Pow(10, float64(rng.IntN(24)-12)) }
	cases := [][]byte{
		[]byte(`[{"rpm_lo":0,"rpm_hi":500,"seconds":1e-3,"revolutions":12.5E2,"mean_thrust_n":null},{"rpm_lo":500,"rpm_hi":1000,"seconds":0.1,"revolutions":-0,"mean_thrust_n":3}]`),
		[]byte(`[]`),
	}
	for i := 0; i < 500; i++ {
		bins := make([]rpmBin, rng.IntN(20))
		for j := range bins {
			bins[j] = rpmBin{RPMLo: val(), RPMHi: val(), Seconds: val(), Revolutions: val()}
			if rng.IntN(3) > 0 {
				th := val()
				bins[j].MeanThrustN = &th
			}
		}
		raw, err := json.Marshal(bins)
		if err != nil {
			t.Fatal(err)
		}
		cases = append(cases, raw)
	}
	for _, raw := range cases {
		var want, got []rpmBin
		if err := json.Unmarshal(raw, &want); err != nil {
			t.Fatal(err)
		}
		if err := gojson.Unmarshal(raw, &got); err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(got, want) {
			t.Fatalf("%s\ngo-json  %+v\nstdlib   %+v", raw, got, want)
		}
	}
}

package store

import (
	"reflect"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// fill sets every reachable exported leaf of v from seed, allocating
// pointers, slices and maps on the way, so that two fills with one seed are
// equal and a fill with another seed differs everywhere.
func fill(v reflect.Value, seed int) {
	switch v.Kind() {
	case reflect.Pointer:
		if v.IsNil() {
			v.Set(reflect.New(v.Type().Elem()))
		}
		fill(v.Elem(), seed)
	case reflect.Slice:
		if v.IsNil() {
			v.Set(reflect.MakeSlice(v.Type(), 3, 3))
		}
		for i := 0; i < v.Len(); i++ {
			fill(v.Index(i), seed+i)
		}
	case reflect.Map:
		if v.IsNil() {
			v.Set(reflect.MakeMap(v.Type()))
		}
		k := reflect.New(v.Type().Key()).Elem()
		fill(k, 1) // the same key every time: the value changes
		val := reflect.New(v.Type().Elem()).Elem()
		fill(val, seed)
		v.SetMapIndex(k, val)
	case reflect.Struct:
		if v.Type() == reflect.TypeOf(time.Time{}) {
			v.Set(reflect.ValueOf(time.Unix(int64(seed), 0)))
			return
		}
		for i := 0; i < v.NumField(); i++ {
			if v.Field(i).CanSet() {
				fill(v.Field(i), seed+i)
			}
		}
	case reflect.String:
		v.SetString(string(rune('a' + seed%26)))
	case reflect.Bool:
		v.SetBool(seed%2 == 1)
	case reflect.Int, reflect.Int64, reflect.Int32:
		v.SetInt(int64(seed))
	case reflect.Uint8:
		v.SetUint(uint64(seed % 256))
	case reflect.Float64:
		v.SetFloat(float64(seed) + 0.5)
	}
}

func checkClone[T any](t *testing.T, name string) {
	t.Helper()
	var orig, want T
	fill(reflect.ValueOf(&orig), 1)
	fill(reflect.ValueOf(&want), 1)
	c := clone(&orig)
	if !reflect.DeepEqual(*c, orig) {
		t.Fatalf("%s: the clone differs from its original", name)
	}
	fill(reflect.ValueOf(c), 7)
	if !reflect.DeepEqual(orig, want) {
		t.Errorf("%s: changing the clone changed the original", name)
	}
	if reflect.DeepEqual(*c, orig) {
		t.Errorf("%s: the fill did not change the clone", name)
	}
}

// A clone shares nothing with its original: filling every member of the
// clone (through its pointers, slices, raw JSON and maps) leaves the
// original as it was, for every record type the store updates or audits.
func TestCloneSharesNothing(t *testing.T) {
	checkClone[fleet.Airframe](t, "airframe")
	checkClone[fleet.Part](t, "part")
	checkClone[fleet.Job](t, "job")
	checkClone[fleet.ServiceRule](t, "service rule")
	checkClone[fleet.Event](t, "event")
	checkClone[fleet.APIKey](t, "api key")
	checkClone[fleet.WorkRecord](t, "work record")
	checkClone[fleet.Flight](t, "flight")
	checkClone[fleet.Fit](t, "fit")
	checkClone[fleet.ColumnMap](t, "column map")
	checkClone[map[string][]byte](t, "map")
}

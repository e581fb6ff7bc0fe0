package fleet

import (
	"strings"
	"time"

	"github.com/Masterminds/semver/v3"
)

// SoftwareKinds are the part kinds that run software whose version the
// register keeps: flight controller, speed controller, gimbal, camera, GNSS.
var SoftwareKinds = []PartKind{KindFlightController, KindESC, KindGimbal, KindCamera, KindGNSS}

// CarriesSoftware reports whether parts of kind k carry a software version.
func (k PartKind) CarriesSoftware() bool {
	for _, s := range SoftwareKinds {
		if k == s {
			return true
		}
	}
	return false
}

// Version is a parsed software version. Makers' versions are mostly
// dotted numbers ("4.2", "4.2.1", "v1.10.3-beta.2"); they are read as
// Semantic Versioning 2.0.0 with missing minor and patch parts taken as 0,
// so 4.2 and 4.2.0 are the same version and 4.10.0 is after 4.9.9.
type Version struct{ v *semver.Version }

// ParseVersion reads a version, naming field when it is not one.
func ParseVersion(field, s string) (Version, error) {
	s = strings.TrimSpace(s)
	if s == "" || len(s) > 64 {
		return Version{}, FieldError(field, "must be a version of 1 to 64 characters")
	}
	v, err := semver.NewVersion(s)
	if err != nil {
		return Version{}, FieldError(field, "%q is not a version (dotted numbers such as 4.2.1, optionally -prerelease)", s)
	}
	return Version{v}, nil
}

// Compare returns -1, 0 or +1 as v is before, the same as or after w
// (Semantic Versioning 2.0.0 precedence).
func (v Version) Compare(w Version) int { return v.v.Compare(w.v) }

// String is the version as written.
func (v Version) String() string { return v.v.Original() }

// SameVersion reports whether two version strings name the same version
// (4.2 and 4.2.0 do); strings that are not versions compare as text.
func SameVersion(a, b string) bool {
	va, errA := semver.NewVersion(strings.TrimSpace(a))
	vb, errB := semver.NewVersion(strings.TrimSpace(b))
	if errA != nil || errB != nil {
		return strings.TrimSpace(a) == strings.TrimSpace(b)
	}
	return va.Equal(vb)
}

// SoftwareSpan is one version a part ran over [From, To); From nil means
// since before the register knew the part, To nil means still running.
type SoftwareSpan struct {
	Version      string     `json:"version"`
	From         *time.Time `json:"from"`
	To           *time.Time `json:"to"`
	WorkRecordID *string    `json:"work_record_id"`
}

// ParseSoftwareReport reads a log's `# software:` value: a bare version is
// the flight controller's; `kind=version` pairs separated by commas or
// semicolons name other kinds (e.g. "flight_controller=4.2.1, gnss=2.0").
func ParseSoftwareReport(s string) (map[PartKind]string, error) {
	out := map[PartKind]string{}
	s = strings.TrimSpace(s)
	if s == "" {
		return out, nil
	}
	if !strings.Contains(s, "=") {
		out[KindFlightController] = s
		return out, nil
	}
	for _, item := range strings.FieldsFunc(s, func(r rune) bool { return r == ',' || r == ';' }) {
		k, v, ok := strings.Cut(item, "=")
		kind := PartKind(strings.TrimSpace(k))
		v = strings.TrimSpace(v)
		if !ok || !kind.CarriesSoftware() || v == "" {
			return nil, FieldError("software", "%q: say kind=version with a kind of %v", strings.TrimSpace(item), SoftwareKinds)
		}
		out[kind] = v
	}
	return out, nil
}

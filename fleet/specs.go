package fleet

import (
	"bytes"
	"encoding/json"
	"errors"
	"io"
	"strings"
)

// MotorSpecs are a motor's specs.
type MotorSpecs struct {
	KV       *float64      `json:"kv,omitempty"`
	Rotation Rotation      `json:"rotation"`
	Bearing  *BearingSpecs `json:"bearing,omitempty"`
}

// BearingSpecs describe a motor's bearings (per bearing).
type BearingSpecs struct {
	// Type is "ball" (the default when empty) or "roller": ISO 281 gives
	// their load-life exponents 3 and 10/3.
	Type           string   `json:"type,omitempty"`
	Count          int      `json:"count"`
	DynamicRatingN *float64 `json:"dynamic_rating_n,omitempty"`
	StaticRatingN  *float64 `json:"static_rating_n,omitempty"`
	LifeFactor     *float64 `json:"life_factor,omitempty"` // a_ISO, conditions factor
}

// PropellerSpecs are a propeller's specs.
type PropellerSpecs struct {
	DiameterIn float64  `json:"diameter_in"`
	PitchIn    *float64 `json:"pitch_in,omitempty"`
	Blades     int      `json:"blades"`
	Rotation   Rotation `json:"rotation"`
}

// PackSpecs are a battery pack's specs.
type PackSpecs struct {
	Chemistry      Chemistry `json:"chemistry"`
	CellsS         int       `json:"cells_s"`
	CellsP         int       `json:"cells_p"`
	RatedMah       float64   `json:"rated_mah"`
	CRating        *float64  `json:"c_rating,omitempty"`
	BaselineIRmOhm *float64  `json:"baseline_ir_mohm,omitempty"`
}

// ValidateSpecs checks the specs of a part of kind k and returns them
// normalised. Motors, propellers and packs have a fixed shape; other kinds
// take any JSON object.
func ValidateSpecs(k PartKind, raw json.RawMessage) (json.RawMessage, error) {
	if len(bytes.TrimSpace(raw)) == 0 || bytes.Equal(bytes.TrimSpace(raw), []byte("null")) {
		raw = json.RawMessage("{}")
	}
	var v any
	switch k {
	case KindMotor:
		var s MotorSpecs
		if err := decodeStrict(raw, &s); err != nil {
			return nil, err
		}
		if err := s.validate(); err != nil {
			return nil, err
		}
		v = s
	case KindPropeller:
		var s PropellerSpecs
		if err := decodeStrict(raw, &s); err != nil {
			return nil, err
		}
		if err := s.validate(); err != nil {
			return nil, err
		}
		v = s
	case KindPack:
		var s PackSpecs
		if err := decodeStrict(raw, &s); err != nil {
			return nil, err
		}
		if err := s.validate(); err != nil {
			return nil, err
		}
		v = s
	default:
		var m map[string]any
		if err := json.Unmarshal(raw, &m); err != nil || m == nil {
			return nil, FieldError("specs", "must be a JSON object")
		}
		v = m
	}
	out, err := json.Marshal(v)
	if err != nil {
		return nil, FieldError("specs", "cannot be encoded")
	}
	return out, nil
}

func (s MotorSpecs) validate() error {
	if !s.Rotation.Valid() {
		return FieldError("specs.rotation", "must be cw or ccw")
	}
	if s.KV != nil && (*s.KV <= 0 || *s.KV > 10000) {
		return FieldError("specs.kv", "must be in (0, 10000]")
	}
	if b := s.Bearing; b != nil {
		if b.Count < 1 || b.Count > 4 {
			return FieldError("specs.bearing.count", "must be 1 to 4")
		}
		if b.Type != "" && b.Type != "ball" && b.Type != "roller" {
			return FieldError("specs.bearing.type", "must be ball or roller")
		}
		if b.DynamicRatingN != nil && *b.DynamicRatingN <= 0 {
			return FieldError("specs.bearing.dynamic_rating_n", "must be positive")
		}
		if b.StaticRatingN != nil && *b.StaticRatingN <= 0 {
			return FieldError("specs.bearing.static_rating_n", "must be positive")
		}
		if b.LifeFactor != nil && (*b.LifeFactor <= 0 || *b.LifeFactor > 50) {
			return FieldError("specs.bearing.life_factor", "must be in (0, 50]")
		}
	}
	return nil
}

func (s PropellerSpecs) validate() error {
	if s.DiameterIn <= 0 || s.DiameterIn > 100 {
		return FieldError("specs.diameter_in", "must be in (0, 100]")
	}
	if s.PitchIn != nil && (*s.PitchIn <= 0 || *s.PitchIn > 100) {
		return FieldError("specs.pitch_in", "must be in (0, 100]")
	}
	if s.Blades < 2 || s.Blades > 8 {
		return FieldError("specs.blades", "must be 2 to 8")
	}
	if !s.Rotation.Valid() {
		return FieldError("specs.rotation", "must be cw or ccw")
	}
	return nil
}

func (s PackSpecs) validate() error {
	if !s.Chemistry.Valid() {
		return FieldError("specs.chemistry", "must be lipo, lihv or liion")
	}
	if s.CellsS < 1 || s.CellsS > 24 {
		return FieldError("specs.cells_s", "must be 1 to 24")
	}
	if s.CellsP < 1 || s.CellsP > 20 {
		return FieldError("specs.cells_p", "must be 1 to 20")
	}
	if s.RatedMah <= 0 || s.RatedMah > 1e6 {
		return FieldError("specs.rated_mah", "must be in (0, 1000000]")
	}
	if s.CRating != nil && (*s.CRating <= 0 || *s.CRating > 1000) {
		return FieldError("specs.c_rating", "must be in (0, 1000]")
	}
	if s.BaselineIRmOhm != nil && (*s.BaselineIRmOhm <= 0 || *s.BaselineIRmOhm > 10000) {
		return FieldError("specs.baseline_ir_mohm", "must be in (0, 10000]")
	}
	return nil
}

// PackSpecsOf decodes the specs of a pack part.
func PackSpecsOf(p *Part) (PackSpecs, error) {
	var s PackSpecs
	if p.Kind != KindPack {
		return s, Errorf(EINVALID, "part %s is a %s, not a pack", p.Serial, p.Kind)
	}
	err := json.Unmarshal(p.Specs, &s)
	return s, err
}

// decodeStrict decodes a specs object refusing unknown members, and names the
// member at fault.
func decodeStrict(raw json.RawMessage, v any) error {
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.DisallowUnknownFields()
	if err := dec.Decode(v); err != nil {
		return specsError(err)
	}
	if _, err := dec.Token(); !errors.Is(err, io.EOF) {
		return FieldError("specs", "must be a single JSON object")
	}
	return nil
}

func specsError(err error) error {
	var te *json.UnmarshalTypeError
	if errors.As(err, &te) {
		return FieldError("specs."+te.Field, "must be of type %s", te.Type.String())
	}
	msg := err.Error()
	if name, ok := strings.CutPrefix(msg, "json: unknown field "); ok {
		return FieldError("specs."+strings.Trim(name, `"`), "is not a known member")
	}
	return FieldError("specs", "must be a JSON object")
}

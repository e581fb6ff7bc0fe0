package schedule

import (
	"crypto/hmac"
	"crypto/sha256"
	"encoding/base64"
	"errors"
	"net/http"
	"strconv"
	"strings"
	"time"
)

// Webhook signatures follow the open Standard Webhooks specification: the
// headers webhook-id (the delivery id), webhook-timestamp (Unix seconds)
// and webhook-signature ("v1," and the base64 HMAC-SHA256 of
// "<id>.<timestamp>.<body>" under the shared secret). A receiver recomputes
// the HMAC, compares it in constant time, and refuses a timestamp far from
// its clock, so a captured delivery cannot be replayed later; the delivery
// id, the same on every retry, lets it drop a repeat within the window.
const (
	HeaderWebhookID        = "webhook-id"
	HeaderWebhookTimestamp = "webhook-timestamp"
	HeaderWebhookSignature = "webhook-signature"
)

// SigningKey is the HMAC key of a configured secret: a "whsec_" secret is
// base64 after the prefix (as the specification writes them); any other is
// used as its bytes.
func SigningKey(secret string) ([]byte, error) {
	if rest, ok := strings.CutPrefix(secret, "whsec_"); ok {
		k, err := base64.StdEncoding.DecodeString(rest)
		if err != nil {
			return nil, errors.New("webhook secret: whsec_ secrets are base64 after the prefix")
		}
		return k, nil
	}
	if len(secret) < 16 {
		return nil, errors.New("webhook secret: at least 16 characters")
	}
	return []byte(secret), nil
}

// Sign returns the webhook-signature value of a delivery.
func Sign(key []byte, id string, ts time.Time, body []byte) string {
	m := hmac.New(sha256.New, key)
	m.Write([]byte(id + "." + strconv.FormatInt(ts.Unix(), 10) + "."))
	m.Write(body)
	return "v1," + base64.StdEncoding.EncodeToString(m.Sum(nil))
}

// Verify is what a receiver does: the signature must match one of the
// (space-separated) v1 signatures, and the timestamp must lie within
// tolerance of now (5 minutes is usual).
func Verify(key []byte, h http.Header, body []byte, now time.Time, tolerance time.Duration) error {
	id, tsText := h.Get(HeaderWebhookID), h.Get(HeaderWebhookTimestamp)
	sec, err := strconv.ParseInt(tsText, 10, 64)
	if id == "" || err != nil {
		return errors.New("webhook: missing id or timestamp")
	}
	ts := time.Unix(sec, 0)
	if d := now.Sub(ts); d > tolerance || d < -tolerance {
		return errors.New("webhook: timestamp outside the tolerance (a replay, or a clock far off)")
	}
	want := Sign(key, id, ts, body)
	for _, s := range strings.Fields(h.Get(HeaderWebhookSignature)) {
		if hmac.Equal([]byte(s), []byte(want)) {
			return nil
		}
	}
	return errors.New("webhook: no signature matches")
}

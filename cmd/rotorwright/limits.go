package main

import (
	"fmt"
	"os"
	"strconv"
	"strings"

	"github.com/spf13/pflag"

	"github.com/rotorwright/rotorwright/api"
)

// limitsFromEnv reads the request limits from the environment (zero: the
// API's default; a negative rate or count turns that limit off).
func (c *Config) limitsFromEnv() error {
	l := &c.Limits
	if err := envDuration("ROTORWRIGHT_IDEMPOTENCY_LEASE", &l.IdempotencyLease); err != nil {
		return err
	}
	if err := envDuration("ROTORWRIGHT_AUTH_LOCKOUT", &l.AuthLockout); err != nil {
		return err
	}
	for _, f := range []struct {
		env string
		dst *float64
	}{{"ROTORWRIGHT_RATE_PER_KEY", &l.RatePerKey}, {"ROTORWRIGHT_RATE_PER_ADDR", &l.RatePerAddr}} {
		if v := os.Getenv(f.env); v != "" {
			n, err := strconv.ParseFloat(v, 64)
			if err != nil {
				return fmt.Errorf("%s: %q is not a number of requests per second", f.env, v)
			}
			*f.dst = n
		}
	}
	for _, f := range []struct {
		env string
		dst *int
	}{{"ROTORWRIGHT_AUTH_FAILURES", &l.AuthFailures}, {"ROTORWRIGHT_MAX_INGESTS", &l.Ingests},
		{"ROTORWRIGHT_MIN_BODY_RATE", &l.MinBodyRate}} {
		if v := os.Getenv(f.env); v != "" {
			n, err := strconv.Atoi(v)
			if err != nil {
				return fmt.Errorf("%s: %q is not a whole number", f.env, v)
			}
			*f.dst = n
		}
	}
	c.MetricsAddr = os.Getenv("ROTORWRIGHT_METRICS_ADDR")
	l.MetricsToken = os.Getenv("ROTORWRIGHT_METRICS_TOKEN")
	c.WebhookSecret = os.Getenv("ROTORWRIGHT_WEBHOOK_SECRET")
	for _, p := range strings.Split(os.Getenv("ROTORWRIGHT_TRUSTED_PROXIES"), ",") {
		if p = strings.TrimSpace(p); p != "" {
			l.TrustedProxies = append(l.TrustedProxies, p)
		}
	}
	return nil
}

// bindLimits adds the flags of the request limits.
func (c *Config) bindLimits(fs *pflag.FlagSet) {
	l, d := &c.Limits, api.DefaultLimits
	fs.DurationVar(&l.IdempotencyLease, "idempotency-lease", l.IdempotencyLease,
		"how long an Idempotency-Key claim holds without renewal (env ROTORWRIGHT_IDEMPOTENCY_LEASE; default "+d.IdempotencyLease.String()+")")
	fs.Float64Var(&l.RatePerKey, "rate-per-key", l.RatePerKey,
		fmt.Sprintf("requests per second per API key, burst twice that; negative: no limit (env ROTORWRIGHT_RATE_PER_KEY; default %g)", d.RatePerKey))
	fs.Float64Var(&l.RatePerAddr, "rate-per-addr", l.RatePerAddr,
		fmt.Sprintf("requests per second per client address, /healthz exempt; negative: no limit (env ROTORWRIGHT_RATE_PER_ADDR; default %g)", d.RatePerAddr))
	fs.IntVar(&l.AuthFailures, "auth-failures", l.AuthFailures,
		fmt.Sprintf("failed authentications from one address within --auth-lockout that lock it out for as long; negative: never (env ROTORWRIGHT_AUTH_FAILURES; default %d)", d.AuthFailures))
	fs.DurationVar(&l.AuthLockout, "auth-lockout", l.AuthLockout,
		"window and length of a failed-authentication lockout (env ROTORWRIGHT_AUTH_LOCKOUT; default "+d.AuthLockout.String()+")")
	fs.IntVar(&l.Ingests, "max-ingests", l.Ingests,
		fmt.Sprintf("log uploads processed at once; more get 503 with Retry-After (env ROTORWRIGHT_MAX_INGESTS; default %d)", d.Ingests))
	fs.IntVar(&l.MinBodyRate, "min-body-rate", l.MinBodyRate,
		fmt.Sprintf("bytes per second a request body must average after the first %s, else 408; negative: none (env ROTORWRIGHT_MIN_BODY_RATE; default %d)", d.BodyGrace, d.MinBodyRate))
	fs.StringVar(&c.MetricsAddr, "metrics-addr", c.MetricsAddr,
		"serve /metrics on this address instead of the API's (env ROTORWRIGHT_METRICS_ADDR)")
	fs.StringVar(&l.MetricsToken, "metrics-token", l.MetricsToken,
		"bearer token /metrics requires (env ROTORWRIGHT_METRICS_TOKEN; default none)")
	hideDefault(fs, "metrics-token")
	fs.StringVar(&c.WebhookSecret, "webhook-secret", c.WebhookSecret,
		"secret that signs webhook deliveries, HMAC-SHA256 (env ROTORWRIGHT_WEBHOOK_SECRET; default: unsigned)")
	hideDefault(fs, "webhook-secret")
	fs.StringSliceVar(&l.TrustedProxies, "trusted-proxy", l.TrustedProxies,
		"address or CIDR of a reverse proxy whose X-Forwarded-For is believed, repeatable (env ROTORWRIGHT_TRUSTED_PROXIES, comma-separated; default none)")
}

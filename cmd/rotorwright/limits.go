package main

import (
	"github.com/spf13/pflag"

	"github.com/rotorwright/rotorwright/api"
)

// bindLimits adds the flags of the request limits (each also from the
// environment; zero means the API's default).
func (c *Config) bindLimits(fs *pflag.FlagSet) {
	l := &c.Limits
	fs.DurationVar(&l.IdempotencyLease, "idempotency-lease", l.IdempotencyLease,
		"how long an Idempotency-Key claim holds without renewal (env ROTORWRIGHT_IDEMPOTENCY_LEASE; default "+
			api.DefaultLimits.IdempotencyLease.String()+")")
}

package main

import (
	"fmt"
	"io"
	"log/slog"
	"os"
	"strings"
	"time"

	"github.com/spf13/pflag"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/internal/logging"
)

// Config is the service configuration, from the environment and flags,
// checked once at start-up.
type Config struct {
	// DatabaseURL is the service's connection: a member of the
	// least-privilege role (migrations.ServiceRole). OwnerDatabaseURL, when
	// set, is the schema owner's, used only to apply migrations; unset,
	// migrations use DatabaseURL.
	DatabaseURL      string
	OwnerDatabaseURL string
	Home             string
	Addr             string
	LogLevel         slog.Level
	// LogFormat is "text" (logfmt-style key=value, the default) or "json"
	// (one JSON object per line, for log collectors).
	LogFormat string
	// Webhooks receive due-status notifications; private and loopback
	// targets need WebhooksAllowPrivate / WebhooksAllowLoopback (SSRF guard).
	Webhooks              []string
	WebhooksAllowPrivate  bool
	WebhooksAllowLoopback bool
	CronRecompute         string
	CronNightly           string
	// Limits bound requests (sizes, leases, rates); zero fields take the
	// API's defaults.
	Limits api.Limits
	// MetricsAddr, when set, serves /metrics there instead of on Addr.
	MetricsAddr string
	// WebhookSecret signs webhook deliveries (HMAC-SHA256).
	WebhookSecret string
}

// ConfigFromEnv reads the environment.
func ConfigFromEnv() (Config, error) {
	c := Config{
		DatabaseURL:      os.Getenv("DATABASE_URL"),
		OwnerDatabaseURL: os.Getenv("ROTORWRIGHT_OWNER_DATABASE_URL"),
		Home:             envOr("ROTORWRIGHT_HOME", "./.rotorwright"),
		Addr:             envOr("ROTORWRIGHT_ADDR", "127.0.0.1:8080"),
		LogFormat:        envOr("ROTORWRIGHT_LOG_FORMAT", "text"),
	}
	if err := (*formatFlag)(&c.LogFormat).Set(c.LogFormat); err != nil {
		return c, fmt.Errorf("ROTORWRIGHT_LOG_FORMAT: %w", err)
	}
	for _, u := range strings.Split(os.Getenv("ROTORWRIGHT_WEBHOOKS"), ",") {
		if u = strings.TrimSpace(u); u != "" {
			c.Webhooks = append(c.Webhooks, u)
		}
	}
	c.WebhooksAllowPrivate = os.Getenv("ROTORWRIGHT_WEBHOOKS_ALLOW_PRIVATE") == "true"
	c.WebhooksAllowLoopback = os.Getenv("ROTORWRIGHT_WEBHOOKS_ALLOW_LOOPBACK") == "true"
	c.CronRecompute = os.Getenv("ROTORWRIGHT_CRON_RECOMPUTE")
	c.CronNightly = os.Getenv("ROTORWRIGHT_CRON_NIGHTLY")
	if err := c.limitsFromEnv(); err != nil {
		return c, err
	}
	if v := os.Getenv("ROTORWRIGHT_LOG_LEVEL"); v != "" {
		if err := c.LogLevel.UnmarshalText([]byte(v)); err != nil {
			return c, fmt.Errorf("ROTORWRIGHT_LOG_LEVEL: %q is not debug, info, warn or error", v)
		}
	}
	return c, nil
}

// bindDatabase adds the flags of every command that opens the database.
func (c *Config) bindDatabase(fs *pflag.FlagSet) {
	fs.StringVar(&c.DatabaseURL, "database-url", c.DatabaseURL, "PostgreSQL URL (env DATABASE_URL; empty: the embedded cluster)")
	fs.StringVar(&c.Home, "home", c.Home, "data folder of the embedded cluster (env ROTORWRIGHT_HOME)")
	fs.Var((*levelFlag)(&c.LogLevel), "log-level", "debug, info, warn or error (env ROTORWRIGHT_LOG_LEVEL)")
	fs.Var((*formatFlag)(&c.LogFormat), "log-format", "text or json: one JSON object per log line (env ROTORWRIGHT_LOG_FORMAT)")
	hideDefault(fs, "database-url")
}

// hideDefault keeps a value taken from the environment out of --help: a
// database URL or webhook URL may carry a password or token.
func hideDefault(fs *pflag.FlagSet, name string) {
	f := fs.Lookup(name)
	f.DefValue = ""
	if _, ok := f.Value.(pflag.SliceValue); ok {
		f.DefValue = "[]" // what pflag takes for an empty list
	}
}

// bindOwner adds the flag of the commands that apply migrations.
func (c *Config) bindOwner(fs *pflag.FlagSet) {
	fs.StringVar(&c.OwnerDatabaseURL, "owner-database-url", c.OwnerDatabaseURL,
		"PostgreSQL URL of the schema owner, used only to apply migrations (env ROTORWRIGHT_OWNER_DATABASE_URL; empty: --database-url)")
	hideDefault(fs, "owner-database-url")
}

// bindServe adds the flags of the commands that serve the API.
func (c *Config) bindServe(fs *pflag.FlagSet) {
	c.bindDatabase(fs)
	c.bindOwner(fs)
	fs.StringVar(&c.Addr, "addr", c.Addr, "listen address; 127.0.0.1:0 picks a free port (env ROTORWRIGHT_ADDR)")
	fs.StringSliceVar(&c.Webhooks, "webhook", c.Webhooks, "URL for due-status notifications, repeatable (env ROTORWRIGHT_WEBHOOKS, comma-separated)")
	fs.BoolVar(&c.WebhooksAllowPrivate, "webhooks-allow-private", c.WebhooksAllowPrivate, "allow webhook URLs on private addresses (env ROTORWRIGHT_WEBHOOKS_ALLOW_PRIVATE)")
	fs.BoolVar(&c.WebhooksAllowLoopback, "webhooks-allow-loopback", c.WebhooksAllowLoopback, "allow webhook URLs on loopback addresses (env ROTORWRIGHT_WEBHOOKS_ALLOW_LOOPBACK)")
	fs.StringVar(&c.CronRecompute, "cron-recompute", c.CronRecompute, "cron schedule of the due-list recompute, default */15 * * * * (env ROTORWRIGHT_CRON_RECOMPUTE)")
	hideDefault(fs, "webhook")
	fs.StringVar(&c.CronNightly, "cron-nightly", c.CronNightly, "cron schedule of the health and due-list recompute, default 0 2 * * * (env ROTORWRIGHT_CRON_NIGHTLY)")
	c.bindLimits(fs)
}

// levelFlag is a slog.Level as a flag value.
type levelFlag slog.Level

func (l *levelFlag) String() string { return (*slog.Level)(l).String() }
func (l *levelFlag) Type() string   { return "level" }
func (l *levelFlag) Set(s string) error {
	if err := (*slog.Level)(l).UnmarshalText([]byte(s)); err != nil {
		return fmt.Errorf("%q is not debug, info, warn or error", s)
	}
	return nil
}

// formatFlag is the log format as a flag value.
type formatFlag string

func (f *formatFlag) String() string { return string(*f) }
func (f *formatFlag) Type() string   { return "format" }
func (f *formatFlag) Set(s string) error {
	if s != "text" && s != "json" {
		return fmt.Errorf("%q is not text or json", s)
	}
	*f = formatFlag(s)
	return nil
}

// newLogger is the process's logger in the configured format, to w.
func newLogger(w io.Writer, level slog.Level, format string) *slog.Logger {
	return logging.New(w, level, format)
}

// envDuration reads a Go duration ("30s", "2m") from the environment.
func envDuration(k string, dst *time.Duration) error {
	v := os.Getenv(k)
	if v == "" {
		return nil
	}
	d, err := time.ParseDuration(v)
	if err != nil || d <= 0 {
		return fmt.Errorf("%s: %q is not a positive duration such as 30s", k, v)
	}
	*dst = d
	return nil
}

func envOr(k, def string) string {
	if v := os.Getenv(k); v != "" {
		return v
	}
	return def
}

package main

import (
	"flag"
	"fmt"
	"log/slog"
	"os"
	"strings"
)

// Config is the service configuration, from the environment and flags,
// checked once at start-up.
type Config struct {
	DatabaseURL string
	Home        string
	Addr        string
	LogLevel    slog.Level
	// Webhooks receive due-status notifications; private and loopback
	// targets need WebhooksAllowPrivate / WebhooksAllowLoopback (SSRF guard).
	Webhooks              []string
	WebhooksAllowPrivate  bool
	WebhooksAllowLoopback bool
	CronRecompute         string
	CronNightly           string
}

// ConfigFromEnv reads the environment.
func ConfigFromEnv() (Config, error) {
	c := Config{
		DatabaseURL: os.Getenv("DATABASE_URL"),
		Home:        envOr("ROTORWRIGHT_HOME", "./.rotorwright"),
		Addr:        envOr("ROTORWRIGHT_ADDR", "127.0.0.1:8080"),
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
	if v := os.Getenv("ROTORWRIGHT_LOG_LEVEL"); v != "" {
		if err := c.LogLevel.UnmarshalText([]byte(v)); err != nil {
			return c, fmt.Errorf("ROTORWRIGHT_LOG_LEVEL: %q is not debug, info, warn or error", v)
		}
	}
	return c, nil
}

// flags binds the flags that override the environment on serve and demo.
func (c *Config) flags(fs *flag.FlagSet) {
	fs.StringVar(&c.Addr, "addr", c.Addr, "listen address (127.0.0.1:0 picks a free port)")
	fs.StringVar(&c.Home, "home", c.Home, "data folder for the embedded database")
	fs.StringVar(&c.DatabaseURL, "database-url", c.DatabaseURL, "PostgreSQL URL (empty: embedded database)")
	fs.Func("log-level", "debug, info, warn or error", func(s string) error {
		return c.LogLevel.UnmarshalText([]byte(strings.ToUpper(s)))
	})
}

func envOr(k, def string) string {
	if v := os.Getenv(k); v != "" {
		return v
	}
	return def
}

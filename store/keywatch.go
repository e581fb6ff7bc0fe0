package store

import (
	"context"
	"errors"
	"time"

	"github.com/jackc/puddle/v2"
)

// KeyChannel is the channel on which migration 020's trigger announces
// every change to an API key, with the key's id as the payload.
const KeyChannel = "rotorwright_api_keys"

// KeyWatch receives what WatchKeys hears.
type KeyWatch struct {
	// Up is called with true once the listener is listening and with
	// false as soon as its connection is lost (changes may then go
	// unheard until it is back).
	Up func(listening bool)
	// Changed is called with the id of each key changed.
	Changed func(keyID string)
}

// WatchKeys listens on KeyChannel on a connection of its own (taken from
// the pool and detached from it, so it holds none of the pool's places)
// until ctx ends or the pool is closed, reconnecting with backoff when the
// connection is lost.
func (db *DB) WatchKeys(ctx context.Context, w KeyWatch) {
	backoff := 50 * time.Millisecond
	for ctx.Err() == nil {
		c, err := db.pool.Acquire(ctx)
		if errors.Is(err, puddle.ErrClosedPool) {
			return
		}
		if err == nil {
			conn := c.Hijack()
			if _, err = conn.Exec(ctx, `LISTEN `+KeyChannel); err == nil {
				backoff = 50 * time.Millisecond
				w.Up(true)
				for {
					n, werr := conn.WaitForNotification(ctx)
					if werr != nil {
						break
					}
					w.Changed(n.Payload)
				}
				w.Up(false)
			}
			_ = conn.Close(context.Background())
		}
		select {
		case <-ctx.Done():
		case <-time.After(backoff):
		}
		backoff = min(2*backoff, 5*time.Second)
	}
}

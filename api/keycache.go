package api

import (
	"context"
	"crypto/sha256"
	"sync"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// keyCacheTTL is how long an authenticated key is trusted without asking
// the database again. Revocation does not wait for it: every change to a
// key is announced (migration 020) and empties the cache at once.
const keyCacheTTL = 10 * time.Second

// keyCache keeps keys that authenticated, by the SHA-256 of their token,
// while (and only while) a listener hears the database's announcements of
// key changes: any change empties it, and so does losing the listener's
// connection, since announcements may then be missed.
type keyCache struct {
	db   *store.DB
	ttl  time.Duration
	once sync.Once
	stop context.CancelFunc
	done chan struct{}

	mu      sync.Mutex
	live    bool   // the listener is listening
	gen     uint64 // bumped at every emptying: a lookup begun before one stores nothing
	keys    map[[sha256.Size]byte]cachedKey
	waiters map[string]chan struct{} // key id -> closed when its change is heard
}

type cachedKey struct {
	key     *fleet.APIKey
	expires time.Time
}

func newKeyCache(db *store.DB, ttl time.Duration) *keyCache {
	return &keyCache{db: db, ttl: ttl, keys: map[[sha256.Size]byte]cachedKey{}, waiters: map[string]chan struct{}{},
		done: make(chan struct{})}
}

// start begins listening, once, on the first authentication (a server that
// never authenticates holds no listening connection).
func (kc *keyCache) start() {
	kc.once.Do(func() {
		ctx, cancel := context.WithCancel(context.Background())
		kc.stop = cancel
		go func() {
			defer close(kc.done)
			kc.db.WatchKeys(ctx, store.KeyWatch{Up: kc.setLive, Changed: kc.changed})
		}()
	})
}

// close stops the listener and waits for it.
func (kc *keyCache) close() {
	kc.once.Do(func() { close(kc.done) }) // never started
	if kc.stop != nil {
		kc.stop()
	}
	<-kc.done
}

func (kc *keyCache) setLive(live bool) {
	kc.mu.Lock()
	defer kc.mu.Unlock()
	kc.live = live
	kc.emptyLocked()
}

func (kc *keyCache) changed(keyID string) {
	kc.mu.Lock()
	defer kc.mu.Unlock()
	kc.emptyLocked()
	if ch, ok := kc.waiters[keyID]; ok {
		close(ch)
		delete(kc.waiters, keyID)
	}
}

func (kc *keyCache) emptyLocked() {
	kc.gen++
	clear(kc.keys)
}

// authenticate returns the live key holding token, from the cache when it
// may be trusted, else from the database (and caches it if no key change
// was heard meanwhile).
func (kc *keyCache) authenticate(ctx context.Context, token string) (*fleet.APIKey, error) {
	kc.start()
	sum := sha256.Sum256([]byte(token))
	now := time.Now()
	kc.mu.Lock()
	c, ok := kc.keys[sum]
	live, gen := kc.live, kc.gen
	kc.mu.Unlock()
	if ok && live && now.Before(c.expires) {
		k := *c.key
		return &k, nil
	}
	k, err := kc.db.Authenticate(ctx, token)
	if err != nil || !live {
		return k, err
	}
	kc.mu.Lock()
	defer kc.mu.Unlock()
	if kc.live && kc.gen == gen {
		if len(kc.keys) >= maxCachedKeys {
			kc.pruneLocked(now)
		}
		cp := *k
		kc.keys[sum] = cachedKey{key: &cp, expires: now.Add(kc.ttl)}
	}
	return k, nil
}

// maxCachedKeys bounds the cache; a firm has a few dozen keys.
const maxCachedKeys = 4096

func (kc *keyCache) pruneLocked(now time.Time) {
	for s, c := range kc.keys {
		if !now.Before(c.expires) {
			delete(kc.keys, s)
		}
	}
	if len(kc.keys) >= maxCachedKeys {
		kc.emptyLocked()
	}
}

// expect returns a channel closed when a change of the key is heard (nil
// when nothing listens); forget drops it.
func (kc *keyCache) expect(keyID string) <-chan struct{} {
	kc.mu.Lock()
	defer kc.mu.Unlock()
	if !kc.live {
		return nil
	}
	ch := make(chan struct{})
	kc.waiters[keyID] = ch
	return ch
}

func (kc *keyCache) forget(keyID string) {
	kc.mu.Lock()
	defer kc.mu.Unlock()
	delete(kc.waiters, keyID)
}

// revokeGrace is how long a revocation waits after its own instance heard
// the announcement: the other instances' listeners were told at the same
// commit and hear it a fraction of a millisecond later (measured here:
// 0.1 ms), so the client's next request, to any instance, is refused.
const revokeGrace = 50 * time.Millisecond

// revoked empties this instance's cache at once, then waits until the
// announcement of the change is heard here (at most a second) and
// revokeGrace more.
func (kc *keyCache) revoked(heard <-chan struct{}) {
	kc.mu.Lock()
	kc.emptyLocked()
	kc.mu.Unlock()
	if heard == nil {
		return
	}
	select {
	case <-heard:
		time.Sleep(revokeGrace)
	case <-time.After(time.Second):
	}
}

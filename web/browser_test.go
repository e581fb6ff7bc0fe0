package web_test

import (
	"context"
	"encoding/json"
	"fmt"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"os"
	"os/exec"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/demo"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/migrations"
	"github.com/rotorwright/rotorwright/store"
)

func TestMain(m *testing.M) { pgtest.Main(m, migrations.Prepare) }

// demoSeed fixes the short demo fleet the board tests run on (any seed
// gives the same stories; this one is the command's).
const demoSeed = 20261202

// service is the real router over a database holding a short demo fleet,
// served on loopback, with an admin token.
type service struct {
	db    *store.DB
	srv   *httptest.Server
	token string
	keyID string
}

func newService(t testing.TB, months int) *service {
	t.Helper()
	db := store.New(pgtest.NewPool(t))
	ctx := context.Background()
	// The scenario ends today (as the demo command's does), so its stories
	// are current; it spans at least two months.
	months = max(months, 2)
	end := time.Now().UTC().Truncate(24 * time.Hour)
	sc := sim.DemoFleet(demoSeed, end.AddDate(0, -months, 0), months)
	if _, err := demo.Load(ctx, db, &sc, nil); err != nil {
		t.Fatal(err)
	}
	k, token, err := db.CreateKey(store.WithActor(ctx, store.Actor{Name: "test"}), "board test", fleet.RoleViewer)
	if err != nil {
		t.Fatal(err)
	}
	log := slog.New(slog.NewTextHandler(os.Stderr, &slog.HandlerOptions{Level: slog.LevelError}))
	// The tests read the API beside each page faster than one client may
	// (the per-key and per-address rates); the limits have tests of their
	// own in api, so they are off here.
	limits := api.DefaultLimits
	limits.RatePerKey, limits.RatePerAddr = -1, -1
	srv := httptest.NewServer(api.New(db, log, limits, nil).Handler())
	t.Cleanup(srv.Close)
	return &service{db: db, srv: srv, token: token, keyID: k.ID}
}

// get reads an API route with the bearer token into v.
func (s *service) get(t testing.TB, path string, v any) {
	t.Helper()
	req, _ := http.NewRequest("GET", s.srv.URL+path, nil)
	req.Header.Set("Authorization", "Bearer "+s.token)
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	if resp.StatusCode != 200 {
		t.Fatalf("GET %s: %d", path, resp.StatusCode)
	}
	if err := json.NewDecoder(resp.Body).Decode(v); err != nil {
		t.Fatalf("GET %s: %v", path, err)
	}
}

// browser is a headless Chromium driven over the DevTools protocol, with
// the page's console errors, uncaught exceptions and error log entries
// (failed loads, CSP violations) collected.
type browser struct {
	ctx  context.Context
	mu   sync.Mutex
	errs []string
}

// chromium finds the browser: Debian's chromium package, or another
// Chromium-family browser on PATH.
func chromium(t testing.TB) string {
	for _, name := range []string{"chromium", "chromium-browser", "google-chrome", "google-chrome-stable"} {
		if p, err := exec.LookPath(name); err == nil {
			return p
		}
	}
	t.Fatal("the board tests drive a real browser and none was found: install Chromium " +
		"(Debian or Ubuntu: apt-get install chromium; .ci/run installs it)")
	return ""
}

func newBrowser(t testing.TB) *browser {
	t.Helper()
	opts := append(chromedp.DefaultExecAllocatorOptions[:], chromedp.ExecPath(chromium(t)),
		chromedp.UserDataDir(t.TempDir()), chromedp.NoFirstRun,
		// Nothing leaves the machine: the page talks only to the test server.
		chromedp.Flag("disable-background-networking", true), chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true), chromedp.Flag("disable-quic", true))
	if os.Geteuid() == 0 {
		opts = append(opts, chromedp.NoSandbox) // Chromium refuses to run its sandbox as root
	}
	actx, cancelAlloc := chromedp.NewExecAllocator(context.Background(), opts...)
	ctx, cancel := chromedp.NewContext(actx)
	t.Cleanup(func() { cancel(); cancelAlloc() })
	b := &browser{ctx: ctx}
	// Console subscribes at once (starting the browser) and yields console
	// calls, uncaught exceptions and browser log entries in order.
	messages := chromedp.Console(ctx)
	go func() {
		for m, err := range messages {
			if err != nil {
				return
			}
			if m.Type == chromedp.ConsoleError || m.IsException() {
				b.mu.Lock()
				b.errs = append(b.errs, m.String()+" "+m.URL)
				b.mu.Unlock()
			}
		}
	}()
	return b
}

// do runs actions, failing the test on error with the page the browser is
// on and how it begins (an action that waits for what never comes fails
// after 30 s, saying where it waited).
func (b *browser) do(t testing.TB, actions ...chromedp.Action[chromedp.Void]) {
	t.Helper()
	ctx, cancel := context.WithTimeout(b.ctx, 30*time.Second)
	defer cancel()
	if err := chromedp.Do(ctx, actions...); err != nil {
		t.Fatalf("%v\n%s", err, b.where())
	}
}

// where names the page the browser is on and gives the start of its text.
func (b *browser) where() string {
	ctx, cancel := context.WithTimeout(b.ctx, 5*time.Second)
	defer cancel()
	at, err := chromedp.Run(ctx, chromedp.Location())
	if err != nil {
		return "the page could not be read: " + err.Error()
	}
	text, _ := chromedp.Run(ctx, chromedp.Evaluate[string](`document.body ? document.body.innerText.slice(0, 400) : ""`))
	return fmt.Sprintf("on %s, which begins:\n%s", at, text)
}

// eval evaluates a script expression in the page.
func eval[T any](t testing.TB, b *browser, js string) T {
	t.Helper()
	ctx, cancel := context.WithTimeout(b.ctx, 30*time.Second)
	defer cancel()
	v, err := chromedp.Run(ctx, chromedp.Evaluate[T](js))
	if err != nil {
		t.Fatalf("evaluate %s: %v", js, err)
	}
	return v
}

func (b *browser) location(t testing.TB) string {
	t.Helper()
	at, err := chromedp.Run(b.ctx, chromedp.Location())
	if err != nil {
		t.Fatal(err)
	}
	return at
}

// visit loads a page at a viewport width and checks it: it loads without
// console errors, and it does not scroll sideways. It returns the URL the
// browser ended at.
func (b *browser) visit(t testing.TB, url string, width int64) string {
	t.Helper()
	b.mu.Lock()
	b.errs = nil
	b.mu.Unlock()
	b.do(t, chromedp.EmulateViewport(width, 900), chromedp.Navigate(url), chromedp.WaitReady(chromedp.CSS("footer")))
	at := b.location(t)
	dims := eval[[]float64](t, b, `[document.documentElement.scrollWidth, window.innerWidth]`)
	b.mu.Lock()
	errs := append([]string(nil), b.errs...)
	b.mu.Unlock()
	for _, e := range errs {
		t.Errorf("%s at %d px: %s", url, width, e)
	}
	if len(dims) != 2 || dims[0] > dims[1] {
		t.Errorf("%s at %d px scrolls sideways: scrollWidth %v > innerWidth", url, width, dims)
	}
	// A card's content can spill under its neighbour without widening the
	// page (the planner's overdue table did): no card may be wider inside
	// than its box (1 px for rounding).
	spills := eval[[]string](t, b, `[...document.querySelectorAll(".card")]
		.filter(c => c.scrollWidth > c.clientWidth + 1)
		.map(c => (c.querySelector("h2,h3")||{}).textContent + " " + c.scrollWidth + ">" + c.clientWidth)`)
	for _, s := range spills {
		t.Errorf("%s at %d px: a card's content spills out of it: %s", url, width, s)
	}
	return at
}

// screenshot saves the page as a PNG when ROTORWRIGHT_SCREENSHOTS names a
// folder (for the people reviewing the board; no check depends on it).
func (b *browser) screenshot(t testing.TB, name string) {
	dir := os.Getenv("ROTORWRIGHT_SCREENSHOTS")
	if dir == "" {
		return
	}
	png, err := chromedp.Run(b.ctx, chromedp.FullScreenshot(100))
	if err != nil {
		t.Fatal(err)
	}
	if err = os.WriteFile(filepath.Join(dir, name+".png"), png, 0o644); err != nil {
		t.Fatal(err)
	}
}

// signIn pastes the token into the sign-in form as a person would.
func (b *browser) signIn(t testing.TB, base, token string) {
	t.Helper()
	b.do(t, chromedp.EmulateViewport(1400, 900), chromedp.Navigate(base+"/sign-in"), chromedp.WaitVisible(chromedp.ID("token")),
		chromedp.SendKeys(chromedp.ID("token"), token), chromedp.Submit(chromedp.ID("token")),
		chromedp.WaitReady(chromedp.CSS("table.fleet")))
	if at := b.location(t); at != base+"/" {
		t.Fatalf("after sign-in the browser is at %s, want %s/", at, base)
	}
}

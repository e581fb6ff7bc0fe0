package web_test

import (
	"context"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/chromedp/cdproto/emulation"
	"github.com/chromedp/chromedp"

	"github.com/rotorwright/rotorwright/store"
)

// The board in a real browser on a short demo fleet: sign-in, every page at
// phone and desktop widths without console errors or sideways scrolling,
// the fleet's verdicts against the readiness route, the pack chart against
// the health route, sign-out and revocation.
func TestBoard(t *testing.T) {
	s := newService(t, 2)
	b := newBrowser(t)
	base := s.srv.URL

	t.Run("a page without a session goes to sign-in", func(t *testing.T) {
		for _, p := range []string{"/", "/plan", "/airframes/KQ-01"} {
			if at := b.visit(t, base+p, 1400); at != base+"/sign-in" {
				t.Errorf("%s without a session ended at %s, want /sign-in", p, at)
			}
		}
		b.screenshot(t, "signin-1400")
	})

	b.signIn(t, base, s.token)

	t.Run("pages", func(t *testing.T) {
		for _, p := range boardPages(t, s) {
			for _, w := range []int64{390, 1400} {
				at := b.visit(t, base+p.path, w)
				if !strings.HasPrefix(at, base+p.path) {
					t.Errorf("%s ended at %s", p.path, at)
				}
				if w == 1400 || strings.HasPrefix(p.name, "check") {
					b.screenshot(t, p.name+"-"+strconv.FormatInt(w, 10))
				}
			}
		}
	})

	t.Run("fleet verdicts match the readiness route", func(t *testing.T) {
		var list struct {
			Items []struct{ ID, Code string } `json:"items"`
		}
		s.get(t, "/v1/airframes?limit=500", &list)
		b.visit(t, base+"/", 1400)
		rows := eval[[]map[string]string](t, b, `[...document.querySelectorAll("table.fleet tbody tr[data-code]")].map(r =>
			({code: r.dataset.code, ready: r.dataset.ready, shown: r.querySelector(".verdict-cell").innerText}))`)
		if len(rows) != len(list.Items) {
			t.Fatalf("fleet page lists %d airframes, the register %d", len(rows), len(list.Items))
		}
		shown := map[string]map[string]string{}
		for _, r := range rows {
			shown[r["code"]] = r
		}
		notReady := 0
		for _, a := range list.Items {
			var rd struct{ Ready bool }
			s.get(t, "/v1/airframes/"+a.ID+"/readiness", &rd)
			r, ok := shown[a.Code]
			if !ok {
				t.Errorf("%s is not on the fleet page", a.Code)
				continue
			}
			want := "may fly"
			if !rd.Ready {
				want, notReady = "may not fly", notReady+1
			}
			if r["ready"] != map[bool]string{true: "true", false: "false"}[rd.Ready] || !strings.Contains(r["shown"], want) ||
				(rd.Ready && strings.Contains(r["shown"], "may not fly")) {
				t.Errorf("%s: page says %q (ready=%s), readiness route says ready=%v", a.Code, r["shown"], r["ready"], rd.Ready)
			}
		}
		if notReady == 0 {
			t.Error("the demo fleet has no airframe that may not fly: the comparison proves little")
		}
	})

	t.Run("the pack chart has every capacity estimate and the end-of-life line", func(t *testing.T) {
		pack := partOf(t, s, "pack")
		var h struct {
			Pack struct {
				Capacity []struct{} `json:"capacity_series"`
				Forecast *struct {
					Curve []struct{} `json:"curve"`
				} `json:"forecast"`
			} `json:"pack"`
		}
		s.get(t, "/v1/parts/"+pack+"/health", &h)
		if len(h.Pack.Capacity) < 5 {
			t.Fatalf("the demo's best pack has %d capacity estimates: too few to test the chart", len(h.Pack.Capacity))
		}
		b.visit(t, base+"/parts/"+pack, 1400)
		marks := eval[int](t, b, `document.querySelectorAll("#capacity svg path.pt").length`)
		if marks != len(h.Pack.Capacity) {
			t.Errorf("the capacity chart shows %d points, the health route has %d estimates", marks, len(h.Pack.Capacity))
		}
		eol := eval[int](t, b, `document.querySelectorAll("#capacity svg path.s-eol").length`)
		label := eval[string](t, b, `[...document.querySelectorAll("#capacity svg text")].map(t => t.textContent).join("|")`)
		if eol != 1 || !strings.Contains(label, "end of life") {
			t.Errorf("the capacity chart lacks the end-of-life line (%d lines, labels %q)", eol, label)
		}
		// The fitted curve and its band are drawn when the forecast has a model.
		want := 0
		if h.Pack.Forecast != nil && len(h.Pack.Forecast.Curve) > 1 {
			want = 2
		}
		if n := eval[int](t, b, `document.querySelectorAll("#capacity svg path.s-fit, #capacity svg path.s-band").length`); n != want {
			t.Errorf("the capacity chart has %d fitted-curve and band marks, want %d", n, want)
		}
	})

	t.Run("the planner and a job print on A4", func(t *testing.T) {
		var jobs struct {
			Items []struct{ Code string } `json:"items"`
		}
		s.get(t, "/v1/jobs?limit=1", &jobs)
		for _, p := range []string{"/plan", "/jobs/" + jobs.Items[0].Code} {
			// A4 less the print margins (12 mm each side) is 186 mm, 703 CSS px.
			b.visit(t, base+p, 703)
			if _, err := chromedp.Call(b.ctx, emulation.SetEmulatedMedia, emulation.SetEmulatedMediaParams{Media: "print"}); err != nil {
				t.Fatal(err)
			}
			dims := eval[[]float64](t, b, `[document.documentElement.scrollWidth, window.innerWidth]`)
			nav := eval[string](t, b, `getComputedStyle(document.querySelector("header nav")).display`)
			caution := eval[string](t, b, `getComputedStyle(document.querySelector("footer.cautions")).display`)
			if dims[0] > dims[1] || nav != "none" || caution == "none" {
				t.Errorf("%s printed: width %v, navigation %q, cautions %q; want it to fit, no navigation, the cautions", p, dims, nav, caution)
			}
			if _, err := chromedp.Call(b.ctx, emulation.SetEmulatedMedia, emulation.SetEmulatedMediaParams{}); err != nil {
				t.Fatal(err)
			}
			pdf, err := chromedp.Run(b.ctx, chromedp.PrintToPDF(chromedp.PDFPreferCSSPageSize()))
			if err != nil {
				t.Fatal(err)
			}
			// The stylesheet's @page asks for A4: 595 x 842 points.
			if !regexp.MustCompile(`/MediaBox \[0 0 59[45]\.\d+ 84[12]\.\d+\]`).Match(pdf) {
				t.Errorf("%s does not print on A4 pages", p)
			}
		}
	})

	t.Run("sign-out ends the session", func(t *testing.T) {
		b.visit(t, base+"/", 1400)
		b.do(t, chromedp.Click(chromedp.CSS(`form.who button`)), chromedp.WaitVisible(chromedp.ID("token")))
		if at := b.visit(t, base+"/queue", 1400); at != base+"/sign-in" {
			t.Errorf("after sign-out /queue ended at %s", at)
		}
	})

	t.Run("revoking the key ends its sessions", func(t *testing.T) {
		b.signIn(t, base, s.token)
		if at := b.visit(t, base+"/plan", 1400); at != base+"/plan" {
			t.Fatalf("signed in, /plan ended at %s", at)
		}
		ctx := store.WithActor(context.Background(), store.Actor{Name: "test"})
		if _, err := s.db.RevokeKey(ctx, s.keyID); err != nil {
			t.Fatal(err)
		}
		if at := b.visit(t, base+"/plan", 1400); at != base+"/sign-in" {
			t.Errorf("after revocation /plan ended at %s", at)
		}
	})
}

type boardPage struct{ name, path string }

// boardPages lists a URL of every page on the demo fleet: the fleet, an
// airframe of each layout, a pack, a motor and a propeller, the planner at
// each horizon, the queue, the field check before and after asking, a job
// and a flight.
func boardPages(t testing.TB, s *service) []boardPage {
	var af struct {
		Items []struct{ ID, Code, Layout string } `json:"items"`
	}
	s.get(t, "/v1/airframes?limit=500", &af)
	pages := []boardPage{{"fleet", "/"}}
	layouts := map[string]bool{}
	for _, a := range af.Items {
		if !layouts[a.Layout] {
			layouts[a.Layout] = true
			pages = append(pages, boardPage{"airframe-" + a.Layout, "/airframes/" + a.Code})
		}
	}
	for _, kind := range []string{"pack", "motor", "propeller"} {
		pages = append(pages, boardPage{"part-" + kind, "/parts/" + partOf(t, s, kind)})
	}
	var jobs struct {
		Items []struct{ ID, Code string } `json:"items"`
	}
	s.get(t, "/v1/jobs?limit=1", &jobs)
	var flights struct {
		Items []struct{ ID string } `json:"items"`
	}
	s.get(t, "/v1/flights?limit=1", &flights)
	pack := partOf(t, s, "pack")
	return append(pages,
		boardPage{"plan", "/plan"}, boardPage{"plan-30", "/plan?days=30"}, boardPage{"plan-180", "/plan?days=180"},
		boardPage{"queue", "/queue"}, boardPage{"check", "/check"},
		boardPage{"check-answer", "/check?airframe=" + af.Items[0].Code + "&pack=" + pack + "&ask=1"},
		boardPage{"job", "/jobs/" + jobs.Items[0].Code}, boardPage{"flight", "/flights/" + flights.Items[0].ID})
}

// partOf returns a part of the kind: for packs the one with the most
// capacity estimates, so its chart has a fade curve.
func partOf(t testing.TB, s *service, kind string) string {
	var parts struct {
		Items []struct{ ID string } `json:"items"`
	}
	s.get(t, "/v1/parts?limit=100&kind="+kind, &parts)
	if len(parts.Items) == 0 {
		t.Fatalf("no %s in the demo", kind)
	}
	if kind != "pack" {
		return parts.Items[0].ID
	}
	best, most := "", -1
	for _, p := range parts.Items {
		var h struct {
			Pack struct {
				Capacity []any `json:"capacity_series"`
			} `json:"pack"`
		}
		s.get(t, "/v1/parts/"+p.ID+"/health", &h)
		if n := len(h.Pack.Capacity); n > most {
			best, most = p.ID, n
		}
	}
	return best
}

package console

import (
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"benchtender/agent"
)

// chromium returns the path of Debian's Chromium, or skips the test with
// a message saying how to get it (.ci/run installs it).
func chromium(t *testing.T) string {
	t.Helper()
	for _, p := range []string{os.Getenv("BENCHTENDER_CHROMIUM"), "/usr/bin/chromium", "/usr/bin/chromium-browser"} {
		if p == "" {
			continue
		}
		if _, err := exec.LookPath(p); err == nil {
			return p
		}
	}
	if os.Getenv("BENCHTENDER_REQUIRE_BROWSER") != "" {
		t.Fatal("no Chromium, and BENCHTENDER_REQUIRE_BROWSER is set (as .ci/run does)")
	}
	t.Skip("browser test skipped: no Chromium (apt-get install -y chromium, or set BENCHTENDER_CHROMIUM)")
	return ""
}

// newBrowser starts headless Chromium with a tablet-sized window (820 by
// 1180 CSS pixels) and a fresh profile, on this machine's closed network
// (no background connections).
func newBrowser(t *testing.T) context.Context {
	t.Helper()
	path := chromium(t)
	opts := append(chromedp.DefaultExecAllocatorOptions[:],
		chromedp.ExecPath(path),
		chromedp.NoSandbox,
		chromedp.DisableGPU,
		chromedp.UserDataDir(t.TempDir()),
		chromedp.Flag("disable-quic", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.WindowSize(820, 1180),
	)
	actx, cancelA := chromedp.NewExecAllocator(context.Background(), opts...)
	ctx, cancel := chromedp.NewContext(actx)
	t.Cleanup(func() { cancel(); cancelA() })
	if err := chromedp.Do(ctx); err != nil {
		t.Fatalf("start Chromium: %v", err)
	}
	return ctx
}

// shot saves a full-page screenshot when BENCHTENDER_SCREENSHOTS names a
// folder (to look at the pages by eye).
func shot(t *testing.T, ctx context.Context, name string) {
	t.Helper()
	dir := os.Getenv("BENCHTENDER_SCREENSHOTS")
	if dir == "" {
		return
	}
	png, err := chromedp.Run(ctx, chromedp.FullScreenshot(100))
	if err != nil {
		t.Errorf("screenshot %s: %v", name, err)
		return
	}
	os.WriteFile(filepath.Join(dir, name+".png"), png, 0o644)
}

func within(ctx context.Context, d time.Duration) (context.Context, context.CancelFunc) {
	return context.WithTimeout(ctx, d)
}

// A technician at a tablet: the holds page shows the held move; a
// rejection without a reason is refused on screen and nothing is signed;
// an approval with name and reason is applied by the running campaign and
// the handoff file appears.
func TestBrowserSignsOffAHeldMove(t *testing.T) {
	ctx := newBrowser(t)
	f := newFixture(t, "", nil)
	ctx, cancel := within(ctx, 60*time.Second)
	defer cancel()

	for _, p := range []string{"", "runs", "model", "audit"} {
		if err := chromedp.Do(ctx, chromedp.Navigate(f.web.URL+"/"+p), chromedp.WaitVisible(chromedp.CSS("main"))); err != nil {
			t.Fatalf("load /%s: %v", p, err)
		}
		shot(t, ctx, "page-"+map[string]string{"": "overview"}[p]+p)
	}
	form := "#hold-" + f.held + " form"
	if err := chromedp.Do(ctx,
		chromedp.Navigate(f.web.URL+"/holds"),
		chromedp.WaitVisible(chromedp.CSS(form)),
	); err != nil {
		t.Fatalf("holds page: %v", err)
	}
	shot(t, ctx, "page-holds")
	// Reject with no reason.
	if err := chromedp.Do(ctx,
		chromedp.SendKeys(chromedp.CSS(form+` input[name="by"]`), "ada"),
		chromedp.SendKeys(chromedp.CSS(form+` input[name="name"]`), "Ada L."),
		chromedp.Click(chromedp.CSS(form+` button[value="reject"]`)),
		chromedp.WaitVisible(chromedp.CSS(".problem")),
	); err != nil {
		t.Fatalf("reject without reason: %v", err)
	}
	msg, err := chromedp.Run(ctx, chromedp.Text(chromedp.CSS(".problem")))
	if err != nil || !strings.Contains(msg, "needs a reason") {
		t.Fatalf("on screen: %q, %v", msg, err)
	}
	shot(t, ctx, "page-holds-refused")
	if n := f.inbox(t); len(n) != 0 {
		t.Fatalf("a reasonless rejection reached the inbox: %v", n)
	}
	// Approve with a reason: the typed name is kept from the refused form.
	if err := chromedp.Do(ctx,
		chromedp.SendKeys(chromedp.CSS(form+` input[name="reason"]`), "vessel checked, lid clamped"),
		chromedp.Click(chromedp.CSS(form+` button[value="approve"]`)),
		chromedp.WaitVisible(chromedp.CSS(".notice")),
	); err != nil {
		t.Fatalf("approve: %v", err)
	}
	shot(t, ctx, "page-holds-sent")
	e := f.waitFor(t, "the approval", func(e agent.Entry) bool { return e.Kind == agent.KindSignoff })
	if e.By != "ada" || e.Name != "Ada L." || e.Reason != "vessel checked, lid clamped" {
		t.Errorf("signed %+v", e)
	}
	f.waitFor(t, "the handoff", func(e agent.Entry) bool { return e.Kind == agent.KindHandoffOK && e.Run == f.held })
	if _, err := os.Stat(filepath.Join(f.cfg.Instrument.HandoffDir, f.held+".csv")); err != nil {
		t.Errorf("no handoff file after the approval: %v", err)
	}
}

// The page fits a tablet: nothing is wider than the window.
func TestBrowserFitsATablet(t *testing.T) {
	ctx := newBrowser(t)
	f := newFixture(t, "", nil)
	ctx, cancel := within(ctx, 60*time.Second)
	defer cancel()
	for _, p := range []string{"/", "/holds", "/runs", "/model", "/audit"} {
		if err := chromedp.Do(ctx, chromedp.Navigate(f.web.URL+p), chromedp.WaitVisible(chromedp.CSS("main"))); err != nil {
			t.Fatalf("%s: %v", p, err)
		}
		w, err := chromedp.Run(ctx, chromedp.Evaluate[float64]("document.documentElement.scrollWidth"))
		if err != nil {
			t.Fatalf("%s: %v", p, err)
		}
		if w > 820 {
			t.Errorf("%s is %v px wide in an 820 px window", p, w)
		}
	}
}

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
	"benchtender/record"
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
	e := f.waitFor(t, "the approval", func(e record.Entry) bool { return e.Kind == record.KindSignoff })
	if e.By != "ada" || e.Name != "Ada L." || e.Reason != "vessel checked, lid clamped" {
		t.Errorf("signed %+v", e)
	}
	f.waitFor(t, "the handoff", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == f.held })
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

// The all-stop button halts every handoff with the reason recorded, as
// the all-stop command does; the page then offers a resume by name and
// reason, which the running campaign records.
func TestBrowserAllStopAndResume(t *testing.T) {
	ctx := newBrowser(t)
	f := newFixture(t, "", nil)
	ctx, cancel := within(ctx, 60*time.Second)
	defer cancel()
	stop := `form[action="/all-stop"]`
	if err := chromedp.Do(ctx,
		chromedp.Navigate(f.web.URL+"/"),
		chromedp.WaitVisible(chromedp.CSS(stop)),
		chromedp.Click(chromedp.CSS(stop+` button`)),
		chromedp.WaitVisible(chromedp.CSS(".problem")),
	); err != nil {
		t.Fatalf("all-stop without a reason: %v", err)
	}
	if _, err := os.Stat(agent.AllStopPath(f.cfg)); err == nil {
		t.Fatal("an all-stop without a reason was written")
	}
	if err := chromedp.Do(ctx,
		chromedp.SendKeys(chromedp.CSS(stop+` input[name="reason"]`), "coolant leak under the bench"),
		chromedp.Click(chromedp.CSS(stop+` button`)),
		chromedp.WaitVisible(chromedp.CSS(".notice")),
	); err != nil {
		t.Fatalf("all-stop: %v", err)
	}
	shot(t, ctx, "page-all-stop")
	e := f.waitFor(t, "the all-stop", func(e record.Entry) bool { return e.Kind == record.KindAllStop })
	if !strings.Contains(e.Reason, "coolant leak under the bench") {
		t.Errorf("all-stop recorded as %q", e.Reason)
	}
	resume := `form[action="/resume"]`
	if err := chromedp.Do(ctx,
		chromedp.Navigate(f.web.URL+"/"),
		chromedp.WaitVisible(chromedp.CSS(resume)),
		chromedp.SendKeys(chromedp.CSS(resume+` input[name="by"]`), "ada"),
		chromedp.SendKeys(chromedp.CSS(resume+` input[name="name"]`), "Ada L."),
		chromedp.SendKeys(chromedp.CSS(resume+` input[name="reason"]`), "leak fixed, floor dry"),
		chromedp.Click(chromedp.CSS(resume+` button`)),
		chromedp.WaitVisible(chromedp.CSS(".notice")),
	); err != nil {
		t.Fatalf("resume: %v", err)
	}
	r := f.waitFor(t, "the resume", func(e record.Entry) bool { return e.Kind == record.KindResume })
	if r.By != "ada" || r.Name != "Ada L." || r.Reason != "leak fixed, floor dry" {
		t.Errorf("resumed %+v", r)
	}
}

// Approving with edited values: values the gate refuses are refused on
// screen and nothing is signed; a move of a two-person kind shows the
// pending first approval (who, when, the values) on the holds page, and a
// second person's approval of those values hands them off.
func TestBrowserEditOnApproveAndFirstApproval(t *testing.T) {
	ctx := newBrowser(t)
	f := newFixture(t, "\n[console]\nlisten = \"127.0.0.1:0\"\n\n[safety]\ntwo_person = [\"review_min\"]\n", nil)
	ctx, cancel := within(ctx, 60*time.Second)
	defer cancel()
	form := "#hold-" + f.held + " form"
	sign := func(by, name, reason string, then ...chromedp.Action[chromedp.Void]) []chromedp.Action[chromedp.Void] {
		return append([]chromedp.Action[chromedp.Void]{
			chromedp.SendKeys(chromedp.CSS(form+` input[name="by"]`), by),
			chromedp.SendKeys(chromedp.CSS(form+` input[name="name"]`), name),
			chromedp.SendKeys(chromedp.CSS(form+` input[name="reason"]`), reason),
		}, then...)
	}
	// Edited past the hard limit: refused on screen.
	if err := chromedp.Do(ctx,
		chromedp.Navigate(f.web.URL+"/holds"),
		chromedp.WaitVisible(chromedp.CSS(form)),
		chromedp.SetValue(chromedp.CSS(form+` input[name="set_temp"]`), "85"),
	); err != nil {
		t.Fatal(err)
	}
	if err := chromedp.Do(ctx, sign("ada", "Ada L.", "hotter",
		chromedp.Click(chromedp.CSS(form+` button[value="approve"]`)),
		chromedp.WaitVisible(chromedp.CSS(".problem")))...,
	); err != nil {
		t.Fatalf("edit past the hard limit: %v", err)
	}
	msg, _ := chromedp.Run(ctx, chromedp.Text(chromedp.CSS(".problem")))
	if !strings.Contains(msg, "gate refuses the edited values") || len(f.inbox(t)) != 0 {
		t.Fatalf("on screen %q, inbox %v", msg, f.inbox(t))
	}
	// Edited to a flow of 2.5 (still held by review_min on temp, so two
	// people): the first approval.
	if err := chromedp.Do(ctx,
		chromedp.Navigate(f.web.URL+"/holds"),
		chromedp.WaitVisible(chromedp.CSS(form)),
		chromedp.SetValue(chromedp.CSS(form+` input[name="set_flow"]`), "2.5"),
	); err != nil {
		t.Fatal(err)
	}
	if err := chromedp.Do(ctx, sign("ada", "Ada L.", "slower feed",
		chromedp.Click(chromedp.CSS(form+` button[value="approve"]`)),
		chromedp.WaitVisible(chromedp.CSS(".notice")))...,
	); err != nil {
		t.Fatalf("first approval: %v", err)
	}
	first := f.waitFor(t, "the first approval", func(e record.Entry) bool { return e.Kind == record.KindSignoff })
	if !first.Partial || first.Point[1] != 2.5 {
		t.Fatalf("first approval %+v", first)
	}
	if err := chromedp.Do(ctx,
		chromedp.Navigate(f.web.URL+"/holds"),
		chromedp.WaitVisible(chromedp.CSS("#hold-"+f.held+" .first")),
	); err != nil {
		t.Fatalf("pending first approval: %v", err)
	}
	pending, err := chromedp.Run(ctx, chromedp.Text(chromedp.CSS("#hold-"+f.held+" .first")))
	if err != nil {
		t.Fatal(err)
	}
	value, err := chromedp.Run(ctx, chromedp.Value(chromedp.CSS(form+` input[name="set_flow"]`)))
	if err != nil {
		t.Fatal(err)
	}
	shot(t, ctx, "page-holds-first-approval")
	for _, want := range []string{"First of two approvals", "ada (Ada L.)", "flow 2.5", "edited"} {
		if !strings.Contains(pending, want) {
			t.Errorf("pending approval reads %q, lacks %q", pending, want)
		}
	}
	if value != "2.5" {
		t.Errorf("the form starts from flow %q, want the first approval's 2.5", value)
	}
	if err := chromedp.Do(ctx, sign("bo", "Bo K.", "second check",
		chromedp.Click(chromedp.CSS(form+` button[value="approve"]`)),
		chromedp.WaitVisible(chromedp.CSS(".notice")))...,
	); err != nil {
		t.Fatalf("second approval: %v", err)
	}
	h := f.waitFor(t, "the handoff", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == f.held })
	if h.Point[1] != 2.5 {
		t.Errorf("handed off %v, want the flow both signed", h.Point)
	}
}

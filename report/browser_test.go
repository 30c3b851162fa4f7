package report

import (
	"context"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/cdp"
	"github.com/chromedp/cdproto/log"
	"github.com/chromedp/cdproto/network"
	"github.com/chromedp/cdproto/runtime"
	"github.com/chromedp/chromedp"
	"github.com/chromedp/chromedp/kb"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/models/families"
)

// findChromium returns the path of a Chromium or Chrome binary, or "".
func findChromium() string {
	for _, name := range []string{"chromium", "chromium-browser", "google-chrome"} {
		if p, err := exec.LookPath(name); err == nil {
			return p
		}
	}
	return ""
}

// startBrowser starts headless Chromium with the flags this machine needs
// (root, no GPU, no background network) and returns a browser context.
// In CI (CI=true) a missing browser fails the test; elsewhere it skips.
func startBrowser(t *testing.T) (context.Context, context.CancelFunc) {
	t.Helper()
	bin := findChromium()
	if bin == "" {
		if os.Getenv("CI") == "true" {
			t.Fatal("no Chromium installed; .ci/run installs Debian's chromium")
		}
		t.Skip("no Chromium installed (apt-get install chromium); the browser test needs one")
	}
	opts := []chromedp.ExecAllocatorOption{
		chromedp.ExecPath(bin), chromedp.Headless, chromedp.NoSandbox, chromedp.DisableGPU,
		chromedp.NoFirstRun, chromedp.NoDefaultBrowserCheck, chromedp.UserDataDir(t.TempDir()),
		chromedp.Flag("disable-quic", true), chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-component-update", true), chromedp.Flag("disable-sync", true),
		chromedp.WindowSize(1200, 1500),
	}
	actx, cancelAlloc := chromedp.NewExecAllocator(context.Background(), opts...)
	ctx, cancelCtx := chromedp.NewContext(actx)
	ctx, cancelTimeout := context.WithTimeout(ctx, 2*time.Minute)
	return ctx, func() { cancelTimeout(); cancelCtx(); cancelAlloc() }
}

// TestReportInBrowser opens the demo's report from disk in headless
// Chromium, fails on any console error, uncaught exception or failed
// request, checks that the total's chart has one forecast point per
// period of the horizon, selects a node by typing its name and checks
// that the node's chart shows that node's forecasts, and saves
// screenshots in the test's temporary folder. With TRUEUP_SCREENSHOT set
// to a path it also writes the front page's screenshot there (the
// README's picture: TRUEUP_SCREENSHOT=$PWD/docs/report-front.png go test
// ./report -run TestReportInBrowser).
func TestReportInBrowser(t *testing.T) {
	ctx, cancel := startBrowser(t)
	defer cancel()
	res := forecastDemo(t, families.Spec{}) // the demo's own automatic choice
	dir := t.TempDir()
	in, err := FromResult(res, "")
	if err != nil {
		t.Fatal(err)
	}
	path, err := Write(dir, in)
	if err != nil {
		t.Fatal(err)
	}

	var mu sync.Mutex
	var problems []string
	err = chromedp.Listen(ctx, func(ev any) {
		mu.Lock()
		defer mu.Unlock()
		switch e := ev.(type) {
		case *runtime.EventConsoleAPICalled:
			if e.Type == runtime.ConsoleAPICalledTypeError || e.Type == runtime.ConsoleAPICalledTypeAssert {
				problems = append(problems, fmt.Sprintf("console %s: %s", e.Type, argsText(e.Args)))
			}
		case *runtime.EventExceptionThrown:
			problems = append(problems, "exception: "+e.ExceptionDetails.Text+" "+exceptionText(e.ExceptionDetails))
		case *network.EventLoadingFailed:
			problems = append(problems, "failed request: "+e.ErrorText)
		case *network.EventRequestWillBeSent:
			if u := e.Request.URL; !strings.HasPrefix(u, "file:") && !strings.HasPrefix(u, "data:") && !strings.HasPrefix(u, "blob:") {
				problems = append(problems, "request to "+u)
			}
		case *log.EventEntryAdded:
			if e.Entry.Level == log.EntryLevelError {
				problems = append(problems, "log error: "+e.Entry.Text)
			}
		}
	})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := chromedp.Call(ctx, network.Enable, network.EnableParams{}); err != nil {
		t.Fatal(err)
	}
	if _, err := chromedp.Call(ctx, log.Enable, cdp.Empty{}); err != nil {
		t.Fatal(err)
	}
	total, err := totalNodeIndex(res)
	if err != nil {
		t.Fatal(err)
	}
	eval := func(expr string) float64 {
		t.Helper()
		v, err := chromedp.Run(ctx, chromedp.Evaluate[float64](expr))
		if err != nil {
			t.Fatalf("%s: %v", expr, err)
		}
		return v
	}
	if err := chromedp.Do(ctx, chromedp.Navigate("file://"+path)); err != nil {
		t.Fatal(err)
	}
	if _, err := chromedp.Run(ctx, chromedp.Poll[bool](`!!(window.trueupReport && (window.trueupReport.ready || window.trueupReport.error))`,
		chromedp.WithPollingTimeout(30*time.Second))); err != nil {
		t.Fatalf("the page did not finish drawing: %v", err)
	}
	if msg, err := chromedp.Run(ctx, chromedp.Evaluate[string](`window.trueupReport.error || ""`)); err != nil || msg != "" {
		t.Fatalf("the page did not load its data: %v %s", err, msg)
	}
	forecastPoints := eval(`document.getElementById("total-chart").uplot.data[3].filter(v => v != null).length`)
	historyPoints := eval(`document.getElementById("total-chart").uplot.data[1].filter(v => v != null).length`)
	if int(forecastPoints) != res.Horizon {
		t.Errorf("the total's chart has %v forecast points, want %d (the horizon)", forecastPoints, res.Horizon)
	}
	if int(historyPoints) != res.Calendar.T {
		t.Errorf("the total's chart has %v history points, want %d", historyPoints, res.Calendar.T)
	}
	front, err := chromedp.Run(ctx, chromedp.CaptureScreenshot())
	if err != nil {
		t.Fatal(err)
	}
	saveShot(t, filepath.Join(t.TempDir(), "front.png"), front)
	if p := os.Getenv("TRUEUP_SCREENSHOT"); p != "" {
		saveShot(t, p, front)
	}

	// Select a store by typing its name; the node chart must switch from
	// the total to that node and show its reconciled forecasts.
	store := ""
	for _, nd := range res.Structure.Nodes {
		if res.Structure.Levels[nd.Level].Name == "region+store" {
			store = nd.Key[storeAttr(res)]
			break
		}
	}
	if store == "" {
		t.Fatal("the demo has no region+store level")
	}
	before := eval(`+document.getElementById("node-chart").dataset.node`)
	if int(before) != total {
		t.Errorf("the node view started on node %v, want the total (%d)", before, total)
	}
	search := chromedp.CSS("#search")
	if err := chromedp.Do(ctx, chromedp.SendKeys(search, store), chromedp.WaitVisible(chromedp.CSS("#matches li")),
		chromedp.SendKeys(search, kb.Enter)); err != nil {
		t.Fatal(err)
	}
	if _, err := chromedp.Run(ctx, chromedp.Poll[bool](fmt.Sprintf(`+document.getElementById("node-chart").dataset.node !== %d`, total),
		chromedp.WithPollingTimeout(30*time.Second))); err != nil {
		t.Fatalf("the node chart did not change after typing %q and Enter: %v", store, err)
	}
	node := int(eval(`+document.getElementById("node-chart").dataset.node`))
	title, err := chromedp.Run(ctx, chromedp.Text(chromedp.CSS("#node-title")))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(title, store) {
		t.Errorf("after typing %q the node view shows %q", store, title)
	}
	shown, err := chromedp.Run(ctx, chromedp.Evaluate[[]float64](`document.getElementById("node-chart").uplot.data[3].filter(v => v != null)`))
	if err != nil {
		t.Fatal(err)
	}
	want := res.Solution.Forecast[node]
	if len(shown) != len(want) {
		t.Fatalf("the node chart shows %d forecast points, want %d", len(shown), len(want))
	}
	for k := range want {
		if math.Abs(shown[k]-want[k]) > 1e-6*math.Max(1, math.Abs(want[k])) {
			t.Errorf("node %d step %d: chart %v, reconciled forecast %v", node, k+1, shown[k], want[k])
		}
	}
	// The widest interval's band: series 4 (upper) and 5 (lower).
	band, err := chromedp.Run(ctx, chromedp.Evaluate[[][]float64](`[4, 5].map(s => document.getElementById("node-chart").uplot.data[s].filter(v => v != null))`))
	if err != nil {
		t.Fatal(err)
	}
	widest := res.Levels[len(res.Levels)-1]
	for k := range want {
		lo, hi := res.Bounds(node, k, widest)
		tol := 1e-6 * math.Max(1, math.Abs(hi)+math.Abs(want[k]))
		if len(band[0]) != len(want) || len(band[1]) != len(want) || math.Abs(band[0][k]-hi) > tol || math.Abs(band[1][k]-lo) > tol {
			t.Fatalf("node %d step %d: %v%% band drawn as %v, want [%v, %v]", node, k+1, widest, band, lo, hi)
		}
	}
	// The node's plan totals: one row per plan period, the year's total
	// as the summary prints it.
	planRows := eval(`document.querySelectorAll("#node-check table")[1].rows.length`)
	if int(planRows) != len(res.Plans.Periods)+1 {
		t.Errorf("the node's plan table has %v rows, want %d periods and a header", planRows, len(res.Plans.Periods))
	}
	last := len(res.Plans.Periods) - 1
	yearText, err := chromedp.Run(ctx, chromedp.Evaluate[string](fmt.Sprintf(`document.querySelectorAll("#node-check table")[1].rows[%d].cells[3].textContent`, last+1)))
	if err != nil {
		t.Fatal(err)
	}
	year := res.Plans.Actual[node][last] + res.Plans.Forecast[node][last]
	if got := strings.ReplaceAll(yearText, ",", ""); got != strconv.FormatFloat(math.Round(year), 'f', 0, 64) {
		t.Errorf("node %d: %s total shown as %q, want %.0f", node, res.Plans.Periods[last].Period, yearText, year)
	}
	if err := chromedp.Do(ctx, chromedp.ScrollIntoView(chromedp.CSS("#explorer"))); err != nil {
		t.Fatal(err)
	}
	selected, err := chromedp.Run(ctx, chromedp.CaptureScreenshot())
	if err != nil {
		t.Fatal(err)
	}
	saveShot(t, filepath.Join(t.TempDir(), "node.png"), selected)
	labels := pageLabels(t, ctx)
	// Axis ticks keep the digit that tells 12,500 from 13,000; the value
	// axis names the value column and the grain.
	if ok := eval(`+(window.trueupReport.format.short(12500) === "12.5 k" && window.trueupReport.format.short(13000) === "13 k" &&
		window.trueupReport.format.unit === "sales per month")`); ok != 1 {
		t.Errorf("tick labels or the value axis label are wrong: %v", eval(`0`))
	}
	// Legends are blank, not a dash, until the pointer is over a period.
	if dashes := eval(`[...document.querySelectorAll(".u-legend .u-value")].filter(e => /^[–-]+$/.test(e.textContent.trim())).length`); dashes != 0 {
		t.Errorf("%v legend values show a dash", dashes)
	}
	// Numbers are plain decimals: no p-value such as 4.30e-2.
	if exp := eval(`(document.body.innerText.match(/\d\.?\d*e[-+]\d+/g) || []).length`); exp != 0 {
		t.Errorf("the page shows %v numbers in exponent notation", exp)
	}

	// The same run's folder with a backtest's tables beside it: the
	// accuracy section is drawn (its numbers are invented; only the
	// drawing is checked here).
	withAcc := t.TempDir()
	if _, err := output.Write(withAcc, res, []string{"parquet"}); err != nil {
		t.Fatal(err)
	}
	accuracyFolder(t, withAcc)
	accIn, err := FromDir(withAcc)
	if err != nil {
		t.Fatal(err)
	}
	accPath, err := Write(withAcc, accIn)
	if err != nil {
		t.Fatal(err)
	}
	if err := chromedp.Do(ctx, chromedp.Navigate("file://"+accPath)); err != nil {
		t.Fatal(err)
	}
	if _, err := chromedp.Run(ctx, chromedp.Poll[bool](`!!(window.trueupReport && (window.trueupReport.ready || window.trueupReport.error))`,
		chromedp.WithPollingTimeout(30*time.Second))); err != nil {
		t.Fatalf("the page with accuracy tables did not finish drawing: %v", err)
	}
	if charts := eval(`document.getElementById("accuracy").hidden ? -1 : document.querySelectorAll("#accuracy .uplot").length`); charts != 3 {
		t.Errorf("the accuracy section has %v charts, want 3 (MASE by level, coverage, drivers of the total)", charts)
	}
	// The drivers chart names each child by its whole label (the
	// folder's region=Saltcoast store=Juniperhollow1 … 10, ranked), and
	// the first label's slant stays inside the chart, not cut at its
	// left edge.
	if ok := eval(`(() => { const u = [...document.querySelectorAll("#accuracy .chart")].map(e => e.uplot).filter(Boolean)[2];
		const ticks = u.axes[0]._values;
		const whole = ticks.length === 10 && ticks.every((v, k) => v === "region=Saltcoast store=Juniperhollow" + (k + 1));
		const c = document.createElement("canvas").getContext("2d");
		c.font = u.axes[0].font[0];
		const left = u.bbox.left / devicePixelRatio + u.valToPos(0, "x") - c.measureText(ticks[0]).width * Math.cos(u.axes[0]._rotate * Math.PI / 180);
		return +(whole && u.axes[0]._rotate > 0 && left >= 0); })()`); ok != 1 {
		t.Errorf("the drivers chart's labels are cut short or run off its left edge")
	}
	// The scores table carries the CRPS and the energy score, and the
	// coverage of each interval is tabled by level (the folder's 0.61,
	// 3.2 and mint's 76% at region).
	if ok := eval(`(() => { const txt = [...document.querySelectorAll("#accuracy table")].map(t => t.innerText).join("\n");
		return +(txt.includes("0.61") && txt.includes("3.20") && /region\s+76%\s+91%/.test(txt)); })()`); ok != 1 {
		t.Errorf("the accuracy tables lack the CRPS, the energy score or coverage by level")
	}
	if err := chromedp.Do(ctx, chromedp.ScrollIntoView(chromedp.CSS("#accuracy"))); err != nil {
		t.Fatal(err)
	}
	accShot, err := chromedp.Run(ctx, chromedp.CaptureScreenshot())
	if err != nil {
		t.Fatal(err)
	}
	saveShot(t, filepath.Join(t.TempDir(), "accuracy.png"), accShot)
	labels = append(labels, pageLabels(t, ctx)...)
	// The base forecasts have one colour in every chart: in the accuracy
	// charts, "base" is drawn in the forecast charts' base colour, and no
	// other method is.
	if ok := eval(`(() => { const base = getComputedStyle(document.documentElement).getPropertyValue("--base").trim();
		const c = window.trueupReport.format.seriesColours(["bottom-up", "base", "mint", "mint-variance"]);
		return +(c[1] === base && c.filter(x => x === base).length === 1); })()`); ok != 1 {
		t.Errorf("the accuracy charts draw the base forecasts in another colour than the forecast charts")
	}

	// The same forecasts with two locks (the total at step 3, a category
	// at step 5; the demo's fits reused): the locks section lists them,
	// one row of moves per level, and the total's chart passes through
	// its lock with a band of zero width there.
	lockedPath := lockedReport(t, res)
	if err := chromedp.Do(ctx, chromedp.Navigate("file://"+lockedPath)); err != nil {
		t.Fatal(err)
	}
	if _, err := chromedp.Run(ctx, chromedp.Poll[bool](`!!(window.trueupReport && (window.trueupReport.ready || window.trueupReport.error))`,
		chromedp.WithPollingTimeout(30*time.Second))); err != nil {
		t.Fatalf("the page with locks did not finish drawing: %v", err)
	}
	if rows := eval(`document.getElementById("locks").hidden ? -1 : document.querySelectorAll("#locks-tables table")[0].rows.length - 1`); rows != 2 {
		t.Errorf("the locks section lists %v locks, want 2", rows)
	}
	if rows := eval(`document.querySelectorAll("#locks-tables table")[1].rows.length - 1`); int(rows) != len(res.Structure.Levels) {
		t.Errorf("the moves table has %v rows, want one per level (%d)", rows, len(res.Structure.Levels))
	}
	at := res.Calendar.T + 2
	drawn, err := chromedp.Run(ctx, chromedp.Evaluate[[]float64](fmt.Sprintf(`[3, 4, 5].map(s => document.getElementById("total-chart").uplot.data[s][%d])`, at)))
	if err != nil {
		t.Fatal(err)
	}
	if want := lockedTotal(res); len(drawn) != 3 || math.Abs(drawn[0]-want) > 1e-6*want || drawn[1] != drawn[0] || drawn[2] != drawn[0] {
		t.Errorf("the total at its lock is drawn as forecast and band %v, want %v with no width", drawn, want)
	}
	if err := chromedp.Do(ctx, chromedp.ScrollIntoView(chromedp.CSS("#locks"))); err != nil {
		t.Fatal(err)
	}
	lockShot, err := chromedp.Run(ctx, chromedp.CaptureScreenshot())
	if err != nil {
		t.Fatal(err)
	}
	saveShot(t, filepath.Join(t.TempDir(), "locks.png"), lockShot)
	checkReportLabels(t, append(labels, pageLabels(t, ctx)...))
	mu.Lock()
	defer mu.Unlock()
	for _, p := range problems {
		t.Error(p)
	}
}

// lockedTotal is the value the total is locked to in lockedReport: 5%
// above its forecast at step 3.
func lockedTotal(res *engine.Result) float64 {
	total, _ := totalNodeIndex(res)
	return math.Round(1.05 * res.Solution.Forecast[total][2])
}

// lockedReport forecasts the demo again with the fits of res and two
// locks, the total at step 3 (lockedTotal) and the first category at
// step 5 (its forecast less a tenth), and writes its report.
func lockedReport(t *testing.T, res *engine.Result) string {
	t.Helper()
	st := res.Structure
	cat := -1
	for i, nd := range st.Nodes {
		if st.Levels[nd.Level].Name == "category" {
			cat = i
			break
		}
	}
	if cat < 0 {
		t.Fatal("the demo has no category level")
	}
	var b strings.Builder
	b.WriteString(strings.Join(st.Attrs, ",") + ",period,value\n")
	row := func(i, k int, v float64) {
		b.WriteString(strings.Join(st.Nodes[i].Key, ",") + fmt.Sprintf(",%s,%g\n", res.ForecastPeriod(k), v))
	}
	total, _ := totalNodeIndex(res)
	row(total, 2, lockedTotal(res))
	row(cat, 4, math.Round(0.9*res.Solution.Forecast[cat][4]))
	dir := t.TempDir()
	path := filepath.Join(dir, "locks.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	reuse := engine.FitterFunc(func(context.Context, []engine.FitJob, func(int, int)) ([]engine.NodeFit, error) { return res.Fits, nil })
	locked, err := engine.Forecast(context.Background(), demoData(t), engine.Options{Fitter: reuse, Reconcile: engine.Reconciliation{Locks: path}})
	if err != nil {
		t.Fatal(err)
	}
	in, err := FromResult(locked, "")
	if err != nil {
		t.Fatal(err)
	}
	out, err := Write(dir, in)
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// totalNodeIndex returns the index of the node of the total level.
func totalNodeIndex(res *engine.Result) (int, error) {
	for i, nd := range res.Structure.Nodes {
		if res.Structure.Levels[nd.Level].Name == "total" {
			return i, nil
		}
	}
	return 0, fmt.Errorf("no total node")
}

// storeAttr returns the position of the store attribute in node keys.
func storeAttr(res *engine.Result) int {
	for a, name := range res.Structure.Attrs {
		if name == "store" {
			return a
		}
	}
	return len(res.Structure.Attrs) - 1
}

func exceptionText(d *runtime.ExceptionDetails) string {
	if d.Exception != nil {
		return d.Exception.Description
	}
	return ""
}

func argsText(args []*runtime.RemoteObject) string {
	var parts []string
	for _, a := range args {
		if a.Value != nil {
			parts = append(parts, string(a.Value))
		} else {
			parts = append(parts, a.Description)
		}
	}
	return strings.Join(parts, " ")
}

func saveShot(t *testing.T, path string, png []byte) {
	t.Helper()
	if err := os.WriteFile(path, png, 0o644); err != nil {
		t.Fatal(err)
	}
	t.Logf("screenshot: %s", path)
}

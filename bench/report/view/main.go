// Command view opens a report.html from disk in headless Chromium and
// prints how long the page took to draw its first view (from the start of
// navigation, and from the start of its script) and to select nodes: the
// time of window.trueupReport.select plus the next frame, over a seeded
// sample of nodes, and the time to list the matches of a typed name.
package main

import (
	"context"
	"flag"
	"fmt"
	"log"
	"os"
	"os/exec"
	"path/filepath"
	"time"

	"github.com/chromedp/chromedp"
)

func main() {
	path := flag.String("report", "report.html", "report file")
	samples := flag.Int("select", 20, "nodes to select")
	flag.Parse()
	abs, err := filepath.Abs(*path)
	if err != nil {
		log.Fatal(err)
	}
	bin, err := exec.LookPath("chromium")
	if err != nil {
		log.Fatal("no chromium: apt-get install chromium")
	}
	dir, err := os.MkdirTemp("", "view")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(dir)
	actx, cancel := chromedp.NewExecAllocator(context.Background(), chromedp.ExecPath(bin), chromedp.Headless,
		chromedp.NoSandbox, chromedp.DisableGPU, chromedp.NoFirstRun, chromedp.UserDataDir(dir),
		chromedp.Flag("disable-quic", true), chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-component-update", true), chromedp.Flag("disable-sync", true),
		chromedp.WindowSize(1200, 1500))
	defer cancel()
	ctx, cancel := chromedp.NewContext(actx)
	defer cancel()
	ctx, cancel = context.WithTimeout(ctx, 3*time.Minute)
	defer cancel()
	// Start the browser before timing the page.
	if err := chromedp.Do(ctx, chromedp.Navigate("about:blank")); err != nil {
		log.Fatal(err)
	}
	start := time.Now()
	if err := chromedp.Do(ctx, chromedp.Navigate("file://"+abs)); err != nil {
		log.Fatal(err)
	}
	if _, err := chromedp.Run(ctx, chromedp.Poll[bool](`!!(window.trueupReport && (window.trueupReport.ready || window.trueupReport.error))`,
		chromedp.WithPollingInterval(10*time.Millisecond), chromedp.WithPollingTimeout(2*time.Minute))); err != nil {
		log.Fatal(err)
	}
	wall := time.Since(start)
	timings, err := chromedp.Run(ctx, chromedp.Evaluate[map[string]float64](`window.trueupReport.timings`))
	if err != nil {
		log.Fatal(err)
	}
	info, err := os.Stat(abs)
	if err != nil {
		log.Fatal(err)
	}
	fmt.Printf("report: %s, %.1f MB\n", abs, float64(info.Size())/1e6)
	fmt.Printf("first view drawn: %.0f ms after navigation start (data decoded in %.0f ms, script %.0f ms; %.0f ms as seen from the driver)\n",
		timings["sinceNavigation"], timings["decode"], timings["firstView"], float64(wall.Milliseconds()))
	sel, err := chromedp.Run(ctx, chromedp.Evaluate[[]float64](fmt.Sprintf(`(async () => {
		const api = window.trueupReport, n = api.nodeCount, out = [];
		let seed = 12345;
		for (let s = 0; s < %d; s++) {
			seed = (seed * 1103515245 + 12345) %% 2147483648;
			const i = seed %% n, t = performance.now();
			api.select(i, false);
			await new Promise(r => requestAnimationFrame(() => setTimeout(r, 0)));
			out.push(performance.now() - t);
		}
		const search = document.getElementById("search"), t = performance.now();
		search.value = "CAT2-D05-I07";
		search.dispatchEvent(new Event("input"));
		await new Promise(r => requestAnimationFrame(() => setTimeout(r, 0)));
		out.push(performance.now() - t);
		return out;
	})()`, *samples), chromedp.EvalAwaitPromise))
	if err != nil {
		log.Fatal(err)
	}
	search := sel[len(sel)-1]
	sel = sel[:len(sel)-1]
	worst, sum := 0.0, 0.0
	for _, v := range sel {
		worst, sum = max(worst, v), sum+v
	}
	fmt.Printf("select a node (%d seeded picks, until the next frame): mean %.0f ms, worst %.0f ms\n", len(sel), sum/float64(len(sel)), worst)
	fmt.Printf("list the matches of a typed name: %.0f ms\n", search)
}

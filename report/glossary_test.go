package report

import (
	"context"
	"testing"

	"github.com/chromedp/chromedp"

	"trueup/internal/glossary"
)

// labelsScript collects the labels the page shows: headings, table
// headers, form labels, chart titles, and every chart's series and axis
// labels (uPlot draws axis labels on the canvas, so they are read from
// each chart's options).
const labelsScript = `(() => {
	const out = [];
	const add = s => { s = (s || "").trim(); if (s) out.push(s); };
	document.querySelectorAll("h1, h2, h3, h4, th, label, dt, caption, .u-title").forEach(e => add(e.textContent));
	document.querySelectorAll("*").forEach(e => {
		const u = e.uplot;
		if (!u) return;
		u.series.forEach(s => add(s.label));
		u.axes.forEach(a => add(a.label));
	});
	return out;
})()`

// pageLabels returns the labels of the page open in ctx.
func pageLabels(t *testing.T, ctx context.Context) []string {
	t.Helper()
	labels, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](labelsScript))
	if err != nil {
		t.Fatal(err)
	}
	return labels
}

// checkReportLabels checks the labels of the report pages against the
// glossary's "Report labels": a label not listed fails, and so does an
// entry no page showed.
func checkReportLabels(t *testing.T, labels []string) {
	t.Helper()
	g, err := glossary.Load("../docs/glossary.md")
	if err != nil {
		t.Fatal(err)
	}
	unknown, unused := g.Check("Report labels", labels)
	for _, n := range unknown {
		t.Errorf("report label %q is not in docs/glossary.md", n)
	}
	for _, n := range unused {
		t.Errorf("docs/glossary.md lists report label %q, which the report no longer shows", n)
	}
}

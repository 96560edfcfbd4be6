package report

import (
	"bytes"
	"fmt"
	"html/template"
	"math"
	"path/filepath"
	"sort"
	"time"

	"starvet/campaign"
	"starvet/internal/numfmt"
	"starvet/internal/vec"
	"starvet/verdict"
)

type countRow struct {
	Status, Symbol, Color string
	Stars                 int64
}

type candRow struct {
	StarID, Status, Color                        string
	Speed, Range, RGC, VEsc, PUnbound, PUnboundL string
	Origin, GCCons, Flight, DistMethod           string
	Carried                                      bool
}

type plotView struct {
	PlotSummary
	Drawn string
}

type catView struct {
	Name, Release, Role, Epoch, File string
	Read, Kept, Quarantined          int64
}

type pageView struct {
	RunID                       int64
	State, Started, Finished    string
	ToolVersion, Note           string
	Seed                        int64
	Work                        string
	Thresholds                  string
	Total, Computed, Carried    int64
	Quarantined                 int64
	Models                      string
	Catalogs                    []catView
	Counts                      []countRow
	TotalStars                  int
	Reasons                     []reasonCount
	RejectedNoReason            int
	Plots                       []plotView
	Candidates                  []candRow
	EscapeText, GCText, SunText string
	Weighing                    []weighRow
	WeighNote                   string
}

// weighRow is one result of the run's latest weighing.
type weighRow struct {
	Method, Parameter, Median, Int68, Int90, Note string
	Stars                                         int
}

func stamp(t time.Time) string {
	if t.IsZero() {
		return numfmt.Missing
	}
	return t.UTC().Format("2006-01-02 15:04:05 UTC")
}

// candidates are the unbound and marginal stars, most probably unbound
// first; ties by higher median speed, then star id.
func candidates(d *data) []candRow {
	var cs []*star
	for i := range d.stars {
		if st := d.stars[i].Status; st == string(verdict.Unbound) || st == string(verdict.Marginal) {
			cs = append(cs, &d.stars[i])
		}
	}
	key := func(x float64) float64 {
		if !vec.Finite(x) {
			return math.Inf(-1)
		}
		return x
	}
	sort.SliceStable(cs, func(i, j int) bool {
		a, b := cs[i], cs[j]
		if pa, pb := key(a.PUnbound), key(b.PUnbound); pa != pb {
			return pa > pb
		}
		if va, vb := key(a.SpeedP50Kms), key(b.SpeedP50Kms); va != vb {
			return va > vb
		}
		return a.StarID < b.StarID
	})
	out := make([]candRow, 0, len(cs))
	for _, s := range cs {
		origin := s.Origin
		if origin == "" {
			origin = numfmt.Missing
		}
		dm := s.DistanceMethod
		if dm == "" {
			dm = numfmt.Missing
		}
		// A range with a missing end is no range.
		rng := numfmt.Missing
		if !math.IsNaN(s.SpeedP16Kms) && !math.IsNaN(s.SpeedP84Kms) {
			rng = numfmt.Kms(s.SpeedP16Kms) + "–" + numfmt.Kms(s.SpeedP84Kms)
		}
		out = append(out, candRow{
			StarID: s.StarID, Status: s.Status, Color: hexColor(styleOf(s.Status).Color),
			Speed: numfmt.Kms(s.SpeedP50Kms), Range: rng,
			RGC: numfmt.Kpc(s.RGCKpc), VEsc: numfmt.Kms(s.VEscKms),
			PUnbound: numfmt.Prob(s.PUnbound), PUnboundL: numfmt.Prob(s.PUnboundLower),
			Origin: origin, GCCons: numfmt.Prob(s.GCConsistency), Flight: numfmt.Myr(s.FlightTimeMyr),
			DistMethod: dm, Carried: s.Carried(),
		})
	}
	return out
}

// thresholdsText states the p_unbound thresholds the run's verdicts were
// decided with, as the run recorded them.
func thresholdsText(d *data) string {
	u, uok := d.settings.Get(campaign.SettingUnboundP)
	m, mok := d.settings.Get(campaign.SettingMarginalP)
	if !uok || !mok {
		return "not recorded in the ledger for this run"
	}
	return fmt.Sprintf("unbound at p_unbound ≥ %s, marginal at p_unbound ≥ %s (%s)", u, m, d.opt.SettingsSource)
}

func renderHTML(d *data, plots []PlotSummary) ([]byte, int, error) {
	r := d.run
	v := pageView{
		RunID: r.ID, State: r.StateText(), Started: stamp(r.StartedAt), Finished: stamp(r.FinishedAt),
		ToolVersion: r.ToolVersion, Note: r.Note, Seed: r.Seed, Work: r.WorkText(),
		Total: r.StarsTotal, Computed: r.StarsComputed, Carried: r.StarsCarried, Quarantined: r.RowsQuarantined,
		Models: modelsText(d.models), TotalStars: len(d.stars), RejectedNoReason: d.rejectedNoReasons,
		Candidates: candidates(d),
	}
	for _, c := range d.catalogs {
		v.Catalogs = append(v.Catalogs, catView{Name: c.Name, Release: c.Release, Role: c.Role,
			Epoch: numfmt.Fixed(c.Epoch, 1), File: filepath.Base(c.File), Read: c.RowsRead, Kept: c.RowsKept, Quarantined: c.RowsQuarantined})
	}
	v.Counts = countRows(d.counts)
	if len(d.reasons) > d.opt.TopReasons {
		v.Reasons = d.reasons[:d.opt.TopReasons]
	} else {
		v.Reasons = d.reasons
	}
	v.Plots = plotViews(plots)
	v.EscapeText, v.GCText, v.SunText = settingsTexts(d)
	v.Thresholds = thresholdsText(d)
	if inf := d.inference; inf != nil {
		v.WeighNote = fmt.Sprintf("inference %d, made %s with %s", inf.ID, inf.MadeAt, inf.ToolVersion)
		for _, r := range inf.Results {
			f := func(x float64) string { return numfmt.Value(x) }
			v.Weighing = append(v.Weighing, weighRow{Method: r.Method, Parameter: r.Parameter, Median: f(r.Median),
				Int68: "[" + f(r.Lo68) + ", " + f(r.Hi68) + "]", Int90: "[" + f(r.Lo90) + ", " + f(r.Hi90) + "]", Stars: r.Stars, Note: r.Note})
		}
	}
	var buf bytes.Buffer
	if err := pageTemplate.Execute(&buf, v); err != nil {
		return nil, 0, err
	}
	return buf.Bytes(), len(v.Candidates), nil
}

// countRows lists the statuses of tableOrder, then any others present,
// with their counts.
func countRows(counts map[string]int64) []countRow {
	present := map[string]bool{}
	for s := range counts {
		present[s] = true
	}
	seen := map[string]bool{}
	var order []string
	for _, s := range tableOrder {
		order = append(order, s)
		seen[s] = true
	}
	for _, s := range sortStatuses(present) {
		if !seen[s] {
			order = append(order, s)
		}
	}
	var rows []countRow
	for _, s := range order {
		st := styleOf(s)
		rows = append(rows, countRow{Status: s, Symbol: st.Symbol, Color: hexColor(st.Color), Stars: counts[s]})
	}
	return rows
}

func plotViews(plots []PlotSummary) []plotView {
	var views []plotView
	for _, ps := range plots {
		n := 0
		for _, c := range ps.Points {
			n += c
		}
		unit := "markers"
		switch ps.File {
		case "p_unbound.svg":
			unit = "bar segments"
		case "weigh_vesc.svg":
			unit = "grid nodes"
		}
		views = append(views, plotView{PlotSummary: ps, Drawn: fmt.Sprintf("%d %s", n, unit)})
	}
	return views
}

// settingsTexts states the escape radius, centre radius and Solar
// distance the plots were drawn with, and where each comes from.
func settingsTexts(d *data) (escape, gc, sun string) {
	src := d.opt.SettingsSource
	if src == "" {
		src = "given in the options"
	}
	escape = "escape to infinity (the campaign default; this run's setting is not recorded in the ledger)"
	if d.opt.EscapeRadiusKpc > 0 {
		escape = "escape to r = " + numfmt.Exact(d.opt.EscapeRadiusKpc) + " kpc (" + src + ")"
	} else if d.opt.SettingsSource != "" {
		escape = fmt.Sprintf("escape to infinity (%s)", src)
	}
	gc = numfmt.Exact(d.opt.GCRadiusKpc) + " kpc (" + src + ")"
	if d.gcDefault {
		gc = numfmt.Exact(d.opt.GCRadiusKpc) + " kpc (default; not recorded in the ledger)"
	}
	sun = numfmt.Exact(d.opt.SunDistanceKpc) + " kpc (" + src + ")"
	if d.sunDefault {
		sun = numfmt.Exact(d.opt.SunDistanceKpc) + " kpc (default; not recorded in the ledger)"
	}
	return escape, gc, sun
}

var pageTemplate = template.Must(template.New("page").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>starvet report, run {{.RunID}}</title>
<style>
body { font-family: sans-serif; margin: 1.5em auto; max-width: 70em; color: #222; line-height: 1.4; }
h1 { font-size: 1.6em; margin-bottom: 0.2em; }
h2 { font-size: 1.25em; margin-top: 1.6em; border-bottom: 1px solid #ccc; }
table { border-collapse: collapse; margin: 0.5em 0; font-size: 0.92em; }
th, td { border: 1px solid #ccc; padding: 0.2em 0.6em; text-align: left; }
td.n { text-align: right; font-variant-numeric: tabular-nums; }
#candidates td { white-space: nowrap; }
.wide { overflow-x: auto; }
th { background: #f0f0f0; }
.caution { border: 2px solid #D55E00; background: #fff4ec; padding: 0.7em 1em; margin: 1em 0; }
.sw { display: inline-block; width: 0.9em; height: 0.9em; vertical-align: middle; margin-right: 0.4em; border: 1px solid #555; }
figure { margin: 1.2em 0; }
figure img { max-width: 100%; height: auto; border: 1px solid #ddd; }
figcaption { font-size: 0.9em; color: #444; max-width: 60em; }
dl { display: grid; grid-template-columns: max-content auto; gap: 0.1em 1em; }
dt { font-weight: bold; }
dd { margin: 0; }
</style>
</head>
<body>
<h1>starvet report, run {{.RunID}}</h1>
<div class="caution" id="caution"><strong>Caution.</strong> An <em>unbound</em> status depends on the adopted Galactic potential and Solar parameters. It marks a candidate for follow-up observations, not a discovery.</div>

<h2>Run</h2>
<dl>
<dt>Run</dt><dd>{{.RunID}} ({{.State}}{{with .Work}}, {{.}}{{end}})</dd>
<dt>Started</dt><dd>{{.Started}}</dd>
<dt>Finished</dt><dd>{{.Finished}}</dd>
<dt>Tool version</dt><dd>{{.ToolVersion}}</dd>
<dt>Potential model</dt><dd>{{.Models}}</dd>
<dt>Verdict thresholds</dt><dd>{{.Thresholds}}</dd>
<dt>Escape speed</dt><dd>{{.EscapeText}}</dd>
<dt>Centre radius</dt><dd>{{.GCText}}</dd>
<dt>Sun to centre</dt><dd>{{.SunText}}</dd>
<dt>Seed</dt><dd>{{.Seed}}</dd>
<dt>Stars</dt><dd>{{.Total}} in the run: {{.Computed}} computed, {{.Carried}} carried forward; {{.Quarantined}} input rows quarantined</dd>
{{if .Note}}<dt>Note</dt><dd>{{.Note}}</dd>{{end}}
</dl>

<h2>Catalogs</h2>
<table id="catalogs">
<tr><th>catalog</th><th>release</th><th>role</th><th>epoch</th><th>file</th><th>rows read</th><th>rows kept</th><th>rows quarantined</th></tr>
{{range .Catalogs}}<tr><td>{{.Name}}</td><td>{{.Release}}</td><td>{{.Role}}</td><td class="n">{{.Epoch}}</td><td>{{.File}}</td><td class="n">{{.Read}}</td><td class="n">{{.Kept}}</td><td class="n">{{.Quarantined}}</td></tr>
{{end}}</table>

<h2>Status counts</h2>
<table id="counts">
<tr><th>status</th><th>symbol in the plots</th><th>stars</th></tr>
{{range .Counts}}<tr><td>{{.Status}}</td><td><span class="sw" style="background: {{.Color}}"></span>{{.Symbol}}</td><td class="n">{{.Stars}}</td></tr>
{{end}}<tr><th>all</th><th></th><td class="n">{{.TotalStars}}</td></tr>
</table>

<h2>Most frequent rejection reasons</h2>
<p>Among the rejected stars: how many failed each rule (a star may fail several).{{if .RejectedNoReason}} {{.RejectedNoReason}} rejected star(s) have no stored reasons.{{end}}</p>
<table id="reasons">
<tr><th>rule</th><th>stars</th><th>example message</th></tr>
{{range .Reasons}}<tr><td>{{.RuleID}}</td><td class="n">{{.Stars}}</td><td>{{.StarID}}: {{.Example}}</td></tr>
{{else}}<tr><td colspan="3">no failed rules recorded</td></tr>
{{end}}</table>

{{if .Weighing}}<h2>Weighing the Galaxy</h2>
<p>The latest weighing of this run's stars (starvet weigh; {{.WeighNote}}). The samples are chosen from the data, not from the verdicts. The masses depend on the sample's selection and on the potential's baryonic part; masses from the velocity tail come out low by up to about 20 per cent in simulated galaxies (Grand et al. 2019, MNRAS 487, L72).</p>
<table>
<tr><th>method</th><th>parameter</th><th>median</th><th>68% interval</th><th>90% interval</th><th>stars</th><th>note</th></tr>
{{range .Weighing}}<tr><td>{{.Method}}</td><td>{{.Parameter}}</td><td>{{.Median}}</td><td>{{.Int68}}</td><td>{{.Int90}}</td><td>{{.Stars}}</td><td>{{.Note}}</td></tr>
{{end}}</table>
{{end}}
<h2>Plots</h2>
{{range .Plots}}<figure>
<img src="{{.File}}" alt="{{.Title}}" data-plot="{{.File}}">
<figcaption><strong>{{.Title}}.</strong> {{.Note}} Drawn: {{.Drawn}}.</figcaption>
</figure>
{{end}}
<h2>Candidates: unbound and marginal stars</h2>
<p>Sorted by p_unbound, most probable first. Speeds are Galactocentric, median with the 16–84 per cent range; r_gc is the Galactocentric distance. A star marked * was computed in an earlier run and carried forward.</p>
<div class="wide"><table id="candidates">
<tr><th>star</th><th>status</th><th>speed (km/s)</th><th>16–84 (km/s)</th><th>r_gc (kpc)</th><th>v_esc (km/s)</th><th>p_unbound</th><th>p_unbound, rv lower bound</th><th>origin</th><th>gc_consistency</th><th>flight time (Myr)</th><th>distance method</th></tr>
{{range .Candidates}}<tr class="candidate"><td>{{.StarID}}{{if .Carried}}*{{end}}</td><td><span class="sw" style="background: {{.Color}}"></span>{{.Status}}</td><td class="n">{{.Speed}}</td><td class="n">{{.Range}}</td><td class="n">{{.RGC}}</td><td class="n">{{.VEsc}}</td><td class="n">{{.PUnbound}}</td><td class="n">{{.PUnboundL}}</td><td>{{.Origin}}</td><td class="n">{{.GCCons}}</td><td class="n">{{.Flight}}</td><td>{{.DistMethod}}</td></tr>
{{else}}<tr><td colspan="12">no unbound or marginal stars in this run</td></tr>
{{end}}</table></div>
<script>
// Marks each plot as loaded (or not), with its place on the page, so a
// headless check can read both from the DOM.
window.addEventListener("load", function () {
  document.querySelectorAll("img[data-plot]").forEach(function (im) {
    var r = im.getBoundingClientRect();
    im.setAttribute("data-loaded", im.complete && im.naturalWidth > 0 ? "yes" : "no");
    im.setAttribute("data-rect", [r.left + window.scrollX, r.top + window.scrollY, r.width, r.height].map(Math.round).join(","));
  });
});
</script>
</body>
</html>
`))

package evaluation

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/parallaxdepth/parallax/depth"
)

// measure is one column of the tables: rates (bad-K, δ) are printed in
// percent, as the README quotes them.
type measure struct {
	name, csv string
	depth     bool // a depth measure, else disparity
	pct       bool
	get       func(d depth.DisparityMetrics, z depth.DepthMetrics) float64
}

var measures = []measure{
	{"EPE px", "epe_px", false, false, func(d depth.DisparityMetrics, _ depth.DepthMetrics) float64 { return d.EPE }},
	{"bad-1 %", "bad1_pct", false, true, func(d depth.DisparityMetrics, _ depth.DepthMetrics) float64 { return d.Bad1 }},
	{"bad-2 %", "bad2_pct", false, true, func(d depth.DisparityMetrics, _ depth.DepthMetrics) float64 { return d.Bad2 }},
	{"bad-3 %", "bad3_pct", false, true, func(d depth.DisparityMetrics, _ depth.DepthMetrics) float64 { return d.Bad3 }},
	{"abs rel", "abs_rel", true, false, func(_ depth.DisparityMetrics, z depth.DepthMetrics) float64 { return z.AbsRel }},
	{"sq rel m", "sq_rel_m", true, false, func(_ depth.DisparityMetrics, z depth.DepthMetrics) float64 { return z.SqRel }},
	{"RMSE m", "rmse_m", true, false, func(_ depth.DisparityMetrics, z depth.DepthMetrics) float64 { return z.RMSE }},
	{"RMSE log", "rmse_log", true, false, func(_ depth.DisparityMetrics, z depth.DepthMetrics) float64 { return z.RMSELog }},
	{"δ<1.25 %", "delta1_pct", true, true, func(_ depth.DisparityMetrics, z depth.DepthMetrics) float64 { return z.Delta1 }},
	{"δ<1.25² %", "delta2_pct", true, true, func(_ depth.DisparityMetrics, z depth.DepthMetrics) float64 { return z.Delta2 }},
	{"δ<1.25³ %", "delta3_pct", true, true, func(_ depth.DisparityMetrics, z depth.DepthMetrics) float64 { return z.Delta3 }},
}

func (m measure) value(d depth.DisparityMetrics, z depth.DepthMetrics) float64 {
	if m.pct {
		return 100 * m.get(d, z)
	}
	return m.get(d, z)
}

// scored reports whether r has the measures of m's kind.
func (r *Report) scored(m measure) bool {
	return (m.depth && r.HasDepth) || (!m.depth && r.HasDisparity)
}

// WriteTables writes reports of one scoring under title as text tables:
// the disparity table of each report (stating its hole rule, and for
// HolesExcluded after a report of another rule the coverage: the share of
// the pixels with truth that the estimate has), then the
// depth table of the first (depth does not depend on the hole rule); each
// with one row per pair and, for more than one pair, their mean; rates in
// percent.
func WriteTables(w io.Writer, title string, reps ...*Report) error {
	var b strings.Builder
	fmt.Fprintf(&b, "\n%s\n", title)
	for i, r := range reps {
		if r.HasDisparity {
			fmt.Fprintf(&b, "\ndisparity, %v (pixels at each pair's resolution; bad-K: %% of pixels off by more than K px)\n", r.Holes)
			if all := reps[0].Disparity.N; r.Holes == HolesExcluded && reps[0].Holes != HolesExcluded && all > 0 {
				fmt.Fprintf(&b, "coverage: %d of the %d pixels with truth are valid in the estimate (%.2f %%)\n", r.Disparity.N, all, 100*float64(r.Disparity.N)/float64(all))
			}
			r.table(&b, false)
		}
		if r.HasDepth && i == len(reps)-1 {
			fmt.Fprintf(&b, "\ndepth (metres, no median scaling, pixels whose truth is inside the rig's depth range; δ: %% of pixels)\n")
			reps[0].table(&b, true)
		}
	}
	if _, err := io.WriteString(w, b.String()); err != nil {
		return fmt.Errorf("evaluation: writing tables: %w", err)
	}
	return nil
}

func (r *Report) table(b *strings.Builder, kind bool) {
	tw := tabwriter.NewWriter(b, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprint(tw, "pair\tpixels\t")
	for _, m := range measures {
		if m.depth == kind {
			fmt.Fprintf(tw, "%s\t", m.name)
		}
	}
	fmt.Fprintln(tw)
	rows := r.Pairs
	if len(rows) > 1 {
		rows = append(rows[:len(rows):len(rows)], PairScore{Name: "mean", Disparity: r.Disparity, Depth: r.Depth})
	}
	for _, p := range rows {
		n := p.Disparity.N
		if kind {
			n = p.Depth.N
		}
		fmt.Fprintf(tw, "%s\t%d\t", p.Name, n)
		for _, m := range measures {
			if m.depth == kind {
				fmt.Fprintf(tw, "%.4g\t", m.value(p.Disparity, p.Depth))
			}
		}
		fmt.Fprintln(tw)
	}
	tw.Flush()
}

// WriteComparison writes one table of the mean measures before and after
// (for example an adaptation), with the change in the measure's unit
// (points for rates) and, for errors, in percent of the value before:
// before[i] and after[i] are reports of the same hole rule, the depth rows
// come from the first.
func WriteComparison(w io.Writer, before, after []*Report) error {
	if len(before) != len(after) || len(before) == 0 {
		return fmt.Errorf("evaluation: WriteComparison of %d and %d reports", len(before), len(after))
	}
	var b strings.Builder
	fmt.Fprintf(&b, "\nmeans over the pairs; rates in %%\n")
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "measure\tbefore\tafter\tchange\t")
	for i := range before {
		for _, m := range measures {
			x, y := before[i], after[i]
			if !x.scored(m) || !y.scored(m) || (m.depth && i > 0) {
				continue
			}
			name := m.name
			if !m.depth {
				name += ", " + y.Holes.String()
			}
			vx, vy := m.value(x.Disparity, x.Depth), m.value(y.Disparity, y.Depth)
			change := fmt.Sprintf("%+.4g", vy-vx)
			if m.pct {
				change += " points"
			} else if vx != 0 && !math.IsNaN(vx) {
				change += fmt.Sprintf(" (%+.1f %%)", 100*(vy-vx)/vx)
			}
			fmt.Fprintf(tw, "%s\t%.4g\t%.4g\t%s\t\n", name, vx, vy, change)
		}
	}
	tw.Flush()
	if _, err := io.WriteString(w, b.String()); err != nil {
		return fmt.Errorf("evaluation: writing comparison: %w", err)
	}
	return nil
}

// Phase is one report in a CSV table, named by its phase ("weights",
// "before", "after", a method's name ...).
type Phase struct {
	Name   string
	Report *Report
}

// WriteCSV writes the reports as one CSV table: a header, then one row per
// pair and phase and a "mean" row per phase, with the columns phase, holes,
// pair, disparity_pixels, the disparity measures, depth_pixels and the depth
// measures (rates in percent; a measure not scored is empty; NaN for an
// empty pair).
func WriteCSV(w io.Writer, phases []Phase) error {
	cw := csv.NewWriter(w)
	head := []string{"phase", "holes", "pair", "disparity_pixels"}
	for i, m := range measures {
		if m.depth && !measures[i-1].depth {
			head = append(head, "depth_pixels")
		}
		head = append(head, m.csv)
	}
	cw.Write(head)
	for _, ph := range phases {
		r := ph.Report
		rows := append(r.Pairs[:len(r.Pairs):len(r.Pairs)], PairScore{Name: "mean", Disparity: r.Disparity, Depth: r.Depth})
		for _, p := range rows {
			rec := []string{ph.Name, r.Holes.String(), p.Name, count(r.HasDisparity, p.Disparity.N)}
			for i, m := range measures {
				if m.depth && !measures[i-1].depth {
					rec = append(rec, count(r.HasDepth, p.Depth.N))
				}
				v := ""
				if r.scored(m) {
					v = strconv.FormatFloat(m.value(p.Disparity, p.Depth), 'g', -1, 64)
				}
				rec = append(rec, v)
			}
			cw.Write(rec)
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return fmt.Errorf("evaluation: writing CSV: %w", err)
	}
	return nil
}

func count(scored bool, n int) string {
	if !scored {
		return ""
	}
	return strconv.Itoa(n)
}

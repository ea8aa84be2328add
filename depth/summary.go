package depth

import (
	"encoding/csv"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"
)

// Summary collects metrics of several runs or images under a name each and
// prints them as an aligned text table (WriteTable, String) or as CSV
// (WriteCSV). All rows of a Summary hold the same kind of metrics; the zero
// value is an empty Summary ready for use.
type Summary struct {
	// Columns names the metric columns, set by the first Add call.
	Columns []string
	// Rows holds one entry per Add call, in order.
	Rows []SummaryRow
}

// SummaryRow is one named row of a Summary.
type SummaryRow struct {
	Name   string
	N      int       // pixels counted
	Values []float64 // one per column
}

var (
	depthColumns     = []string{"abs_rel", "sq_rel", "rmse", "rmse_log", "delta_1.25", "delta_1.25^2", "delta_1.25^3"}
	disparityColumns = []string{"epe_px", "bad1", "bad2", "bad3"}
)

func (s *Summary) add(name string, n int, cols []string, vals []float64) error {
	if s.Columns == nil {
		s.Columns = slices.Clone(cols)
	} else if strings.Join(s.Columns, ",") != strings.Join(cols, ",") {
		return fmt.Errorf("depth: Summary holds %s, cannot add a row of %s", strings.Join(s.Columns, ","), strings.Join(cols, ","))
	}
	s.Rows = append(s.Rows, SummaryRow{Name: name, N: n, Values: vals})
	return nil
}

// AddDepth appends a row of depth metrics. It returns an error if s already
// holds disparity metrics.
func (s *Summary) AddDepth(name string, m DepthMetrics) error {
	return s.add(name, m.N, depthColumns, []float64{m.AbsRel, m.SqRel, m.RMSE, m.RMSELog, m.Delta1, m.Delta2, m.Delta3})
}

// AddDisparity appends a row of disparity metrics. It returns an error if s
// already holds depth metrics.
func (s *Summary) AddDisparity(name string, m DisparityMetrics) error {
	return s.add(name, m.N, disparityColumns, []float64{m.EPE, m.Bad1, m.Bad2, m.Bad3})
}

// cells returns the header and rows as text, values with prec decimals
// (−1: the fewest digits that read back exactly).
func (s *Summary) cells(prec int) [][]string {
	out := [][]string{append([]string{"name", "pixels"}, s.Columns...)}
	for _, r := range s.Rows {
		row := []string{r.Name, strconv.Itoa(r.N)}
		for _, v := range r.Values {
			row = append(row, strconv.FormatFloat(v, 'f', prec, 64))
		}
		out = append(out, row)
	}
	return out
}

// WriteTable writes s as a text table: a header line, then one line per row;
// the name column is left-aligned, the numbers right-aligned, values with 4
// decimals.
func (s *Summary) WriteTable(w io.Writer) error {
	cells := s.cells(4)
	widths := make([]int, len(cells[0]))
	for _, row := range cells {
		for i, c := range row {
			widths[i] = max(widths[i], len([]rune(c)))
		}
	}
	var b strings.Builder
	for _, row := range cells {
		for i, c := range row {
			pad := strings.Repeat(" ", widths[i]-len([]rune(c)))
			if i == 0 {
				b.WriteString(c + pad)
			} else {
				b.WriteString("  " + pad + c)
			}
		}
		b.WriteByte('\n')
	}
	if _, err := io.WriteString(w, b.String()); err != nil {
		return fmt.Errorf("depth: writing summary: %w", err)
	}
	return nil
}

// String returns the text table of WriteTable.
func (s *Summary) String() string {
	var b strings.Builder
	s.WriteTable(&b)
	return b.String()
}

// WriteCSV writes s as CSV (RFC 4180): a header row "name,pixels,<columns>",
// then one row per entry, values in full precision.
func (s *Summary) WriteCSV(w io.Writer) error {
	cw := csv.NewWriter(w)
	cw.WriteAll(s.cells(-1))
	if err := cw.Error(); err != nil {
		return fmt.Errorf("depth: writing summary CSV: %w", err)
	}
	return nil
}

package evaluation

import (
	"bytes"
	"context"
	"encoding/csv"
	"strconv"
	"strings"
	"testing"
)

// TestTables: the CSV of two phases parses with encoding/csv as one table
// (one header, 5 rows per phase, the same number of fields in every row)
// whose rates are the numpy reference's fractions × 100; the text tables
// state the hole rule and give the means; the comparison has one row per
// measure.
func TestTables(t *testing.T) {
	ref := loadReference(t)
	set, names := fixtureSet(t)
	reps, err := ScoreRules(context.Background(), &fileEstimator{names: names}, set, nil, HolesZero, HolesFilled)
	if err != nil {
		t.Fatal(err)
	}
	zero, filled := reps[0], reps[1]
	var buf bytes.Buffer
	if err := WriteCSV(&buf, []Phase{{"before", zero}, {"after", filled}}); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) != 1+2*5 || recs[0][0] != "phase" || recs[0][8] != "depth_pixels" {
		t.Fatalf("%d records, header %v", len(recs), recs[0])
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	last := recs[len(recs)-1]
	bad3, _ := strconv.ParseFloat(last[col["bad3_pct"]], 64)
	d1, _ := strconv.ParseFloat(last[col["delta1_pct"]], 64)
	if last[0] != "after" || last[col["pair"]] != "mean" || last[col["holes"]] != "holes filled along the scan line" ||
		!close(bad3, 100*ref.MeanDisparityFilled.Bad3) || !close(d1, 100*ref.MeanDepth.Delta1) {
		t.Errorf("last row %v; numpy bad-3 %v, δ1 %v", last, ref.MeanDisparityFilled.Bad3, ref.MeanDepth.Delta1)
	}
	buf.Reset()
	if err := WriteTables(&buf, "title", zero, filled); err != nil {
		t.Fatal(err)
	}
	text := buf.String()
	for _, want := range []string{"\ntitle\n", "disparity, holes as 0", "disparity, holes filled along the scan line", "bad-3 %", "δ<1.25 %", "mean"} {
		if !strings.Contains(text, want) {
			t.Errorf("tables lack %q:\n%s", want, text)
		}
	}
	if strings.Count(text, "abs rel") != 1 {
		t.Errorf("depth table not once:\n%s", text)
	}
	buf.Reset()
	if err := WriteComparison(&buf, []*Report{zero, zero}, []*Report{filled, filled}); err != nil {
		t.Fatal(err)
	}
	// Header lines, then 4 disparity rows per rule and 7 depth rows once.
	if lines := strings.Count(buf.String(), "\n"); lines != 3+2*4+7 || !strings.Contains(buf.String(), "points") {
		t.Errorf("comparison:\n%s", buf.String())
	}
}

package scoring

import (
	"encoding/csv"
	"encoding/json"
	"io"
	"strconv"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/batch"
	"github.com/cleave-seg/cleave/segment/score"
)

// MetricNames are the names of ms (their JSON keys and columns).
func MetricNames(ms []score.Metric) []string {
	names := make([]string, len(ms))
	for i, m := range ms {
		names[i] = m.String()
	}
	return names
}

// WriteJSON writes the scores as one indented JSON object: for one pair
// (folders false) its measures by name with pred_map and truth_map for a
// binary mask; for folders "pairs" and "mean".
func WriteJSON(w io.Writer, r *Result, folders bool) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	var v any = struct {
		score.Report
		PredMask  *Reading `json:"pred_map,omitempty"`
		TruthMask *Reading `json:"truth_map,omitempty"`
	}{r.Pairs[0].Report, r.Pairs[0].PredMask, r.Pairs[0].TruthMask}
	if folders {
		v = struct {
			Pairs []Scored     `json:"pairs"`
			Mean  score.Report `json:"mean"`
		}{r.Pairs, r.Mean}
	}
	return enc.Encode(v)
}

// WriteCSV writes one row per pair (name, paths, every measure, how each
// side was read) and, for folders, a final "mean" row; names and paths
// are neutralized for spreadsheets (batch.CSVText).
func WriteCSV(w io.Writer, r *Result, folders bool) error {
	cw := csv.NewWriter(w)
	head := append(append([]string{"name", "pred", "truth"}, MetricNames(score.Metrics())...), "pred_map", "pred_objects", "truth_map", "truth_objects")
	if err := cw.Write(head); err != nil {
		return err
	}
	rec := func(name, pred, truth string, m score.Report, pr, tr *Reading) error {
		row := []string{batch.CSVText(name), batch.CSVText(pred), batch.CSVText(truth)}
		for _, v := range m.Values() {
			row = append(row, strconv.FormatFloat(v, 'g', 17, 64))
		}
		if pr != nil {
			row = append(row, pr.Kind, strconv.Itoa(pr.Objects), tr.Kind, strconv.Itoa(tr.Objects))
		} else {
			row = append(row, "", "", "", "")
		}
		return cw.Write(row)
	}
	for _, s := range r.Pairs {
		if err := rec(s.Name, s.Pred, s.Truth, s.Report, &s.PredMap, &s.TruthMap); err != nil {
			return err
		}
	}
	if folders {
		if err := rec("mean", "", "", r.Mean, nil, nil); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

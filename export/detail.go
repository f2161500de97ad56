package export

import (
	"bufio"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"strconv"
)

// judgmentJSON is how one judgment appears in JSON Lines and in the CSV
// judgments column: a grade, or cannot_judge with its reason.
type judgmentJSON struct {
	Assessor    string `json:"assessor"`
	Grade       *int   `json:"grade,omitempty"`
	CannotJudge bool   `json:"cannot_judge,omitempty"`
	Reason      string `json:"reason,omitempty"`
}

type agreementJSON struct {
	Graded      int `json:"graded"`
	CannotJudge int `json:"cannot_judge"`
	Spread      int `json:"spread"`
}

type detailJSON struct {
	QueryID   string         `json:"query_id"`
	DocID     string         `json:"doc_id"`
	Grade     int            `json:"grade"`
	Decided   string         `json:"decided"`
	Split     string         `json:"split,omitempty"`
	Judgments []judgmentJSON `json:"judgments"`
	Agreement agreementJSON  `json:"agreement"`
	// Features as [index, value] pairs, in index order.
	Features [][2]float64 `json:"features,omitempty"`
}

func judgmentsJSON(js []JudgmentDetail) []judgmentJSON {
	out := make([]judgmentJSON, len(js))
	for i, j := range js {
		out[i] = judgmentJSON{Assessor: j.Assessor}
		if j.CannotJudge {
			out[i].CannotJudge, out[i].Reason = true, j.Reason
		} else {
			g := j.Grade
			out[i].Grade = &g
		}
	}
	return out
}

// JSONLWriter writes one JSON object per row with full detail: query,
// document, final grade, how it was decided, split, each judgment, the
// pair's agreement and (when present) the features.
type JSONLWriter struct {
	bw   *bufio.Writer
	enc  *json.Encoder
	rows int
}

// NewJSONLWriter writes to w.
func NewJSONLWriter(w io.Writer) *JSONLWriter {
	bw := bufio.NewWriterSize(w, 64*1024)
	enc := json.NewEncoder(bw)
	enc.SetEscapeHTML(false)
	return &JSONLWriter{bw: bw, enc: enc}
}

// Write appends one row.
func (j *JSONLWriter) Write(r Row) error {
	d := detailJSON{
		QueryID: r.QueryID, DocID: r.DocID, Grade: r.Grade, Decided: r.Decided, Split: r.Split,
		Judgments: judgmentsJSON(r.Judgments),
		Agreement: agreementJSON(r.Agreement),
	}
	if len(r.Features) > 0 {
		d.Features = make([][2]float64, len(r.Features))
		for i, f := range r.Features {
			d.Features[i] = [2]float64{float64(f.Index), f.Value}
		}
	}
	if err := j.enc.Encode(d); err != nil {
		return fmt.Errorf("export: jsonl: query %q document %q: %w", r.QueryID, r.DocID, err)
	}
	j.rows++
	return nil
}

// Rows is the number of rows written so far.
func (j *JSONLWriter) Rows() int { return j.rows }

// Close flushes buffered output.
func (j *JSONLWriter) Close() error { return j.bw.Flush() }

// CSVHeader is the header row of the CSV detail file.
var CSVHeader = []string{"query_id", "doc_id", "grade", "decided", "split", "graded", "cannot_judge", "spread", "judgments"}

// CSVWriter writes the same detail as JSONLWriter, without features, one
// row per pair (RFC 4180 via encoding/csv). The judgments column holds a
// JSON array, the same as in JSON Lines, since a pair has any number of
// judgments.
type CSVWriter struct {
	cw     *csv.Writer
	header bool
	rec    []string
	rows   int
}

// NewCSVWriter writes to w; the header row goes out with the first row
// (or at Close when there are none).
func NewCSVWriter(w io.Writer) *CSVWriter {
	return &CSVWriter{cw: csv.NewWriter(w), rec: make([]string, len(CSVHeader))}
}

// Write appends one row.
func (c *CSVWriter) Write(r Row) error {
	if err := c.writeHeader(); err != nil {
		return err
	}
	js, err := json.Marshal(judgmentsJSON(r.Judgments))
	if err != nil {
		return err
	}
	c.rec[0], c.rec[1] = r.QueryID, r.DocID
	c.rec[2] = strconv.Itoa(r.Grade)
	c.rec[3], c.rec[4] = r.Decided, r.Split
	c.rec[5] = strconv.Itoa(r.Agreement.Graded)
	c.rec[6] = strconv.Itoa(r.Agreement.CannotJudge)
	c.rec[7] = strconv.Itoa(r.Agreement.Spread)
	c.rec[8] = string(js)
	if err := c.cw.Write(c.rec); err != nil {
		return err
	}
	c.rows++
	return nil
}

// Rows is the number of data rows written so far.
func (c *CSVWriter) Rows() int { return c.rows }

// Close writes the header if nothing else was written, and flushes.
func (c *CSVWriter) Close() error {
	if err := c.writeHeader(); err != nil {
		return err
	}
	c.cw.Flush()
	return c.cw.Error()
}

func (c *CSVWriter) writeHeader() error {
	if c.header {
		return nil
	}
	c.header = true
	return c.cw.Write(CSVHeader)
}

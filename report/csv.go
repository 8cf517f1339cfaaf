package report

import (
	"encoding/csv"
	"fmt"
	"io"
	"iter"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/settle-lab/settle/daq"
)

// CSVHeader is the header row of readings CSV files.
var CSVHeader = []string{"time", "elapsed_s", "channel", "logger", "celsius", "status", "raw"}

// TimeFormat is ISO 8601 (RFC 3339) in UTC with milliseconds, as written to CSV.
const TimeFormat = "2006-01-02T15:04:05.000Z07:00"

// WriteCSV writes readings as CSV a spreadsheet opens as is: a header row, comma
// separated, '.' decimals, ISO 8601 UTC times, seconds since start (for plotting),
// °C (empty when the reading is a fault) and the status. Text cells that a spreadsheet
// would run as a formula are prefixed with an apostrophe (common practice against CSV
// injection). It returns the number of readings written.
func WriteCSV(w io.Writer, readings iter.Seq2[daq.Reading, error], start time.Time) (int, error) {
	cw := csv.NewWriter(w)
	cw.UseCRLF = true // RFC 4180 line ends; spreadsheets accept both
	if err := cw.Write(CSVHeader); err != nil {
		return 0, fmt.Errorf("write CSV header: %w", err)
	}
	n := 0
	for r, err := range readings {
		if err != nil {
			return n, err
		}
		if start.IsZero() {
			start = r.Time
		}
		if err := cw.Write(csvRow(r, start)); err != nil {
			return n, fmt.Errorf("write CSV row %d: %w", n+1, err)
		}
		n++
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return n, fmt.Errorf("write CSV: %w", err)
	}
	return n, nil
}

func csvRow(r daq.Reading, start time.Time) []string {
	celsius := ""
	if r.OK() && !math.IsNaN(r.Celsius) && !math.IsInf(r.Celsius, 0) {
		celsius = strconv.FormatFloat(r.Celsius, 'f', -1, 64)
	}
	return []string{
		r.Time.UTC().Format(TimeFormat),
		strconv.FormatFloat(r.Time.Sub(start).Seconds(), 'f', 3, 64),
		safeCell(r.Channel),
		safeCell(r.Logger),
		celsius,
		r.Status.String(),
		safeCell(r.Raw),
	}
}

// safeCell prefixes an apostrophe to text a spreadsheet would evaluate as a formula
// (leading = + - @ tab or CR), unless it is a plain number such as "-12.5".
func safeCell(s string) string {
	if s == "" || !strings.ContainsRune("=+-@\t\r", rune(s[0])) {
		return s
	}
	if _, err := strconv.ParseFloat(s, 64); err == nil {
		return s
	}
	return "'" + s
}

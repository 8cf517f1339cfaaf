// Package csvdialect is the one CSV family settle reads and writes: RFC 4180 quoting,
// a header row, ',' or ';' between fields (';' where the decimal mark is a comma, as
// spreadsheets in many locales write it), '.' or ',' as the decimal mark, an optional
// UTF-8 byte-order mark, CRLF or LF line ends and '#' comment lines. settle writes the
// plainest member (',' and '.'); its readers accept every member.
package csvdialect

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// ErrEmpty is returned by NewReader for input without a header row.
var ErrEmpty = errors.New("empty file: want a header row naming the columns, then one row per reading")

// Reader reads one CSV file of the family.
type Reader struct {
	// Comma is the field separator found in the header row: ',' or ';'.
	Comma rune
	// Header is the header row, each name trimmed of spaces and a byte-order mark.
	Header []string
	// HeaderLine is the header's line number (after comment and blank lines).
	HeaderLine int
	cr         *csv.Reader
}

// maxHeader bounds the bytes read before the header row is found.
const maxHeader = 1 << 20

// NewReader reads the header row of r and sniffs the separator from it: ';' when the
// header has more semicolons than commas, else ','. Input with no header row is
// ErrEmpty.
func NewReader(r io.Reader) (*Reader, error) {
	br := bufio.NewReader(r)
	// A byte-order mark is dropped once, before anything reads the stream: left in, it
	// hides a '#' comment or a blank line behind it from the CSV parser.
	if bom, err := br.Peek(3); err == nil && string(bom) == "\ufeff" {
		br.Discard(3)
	}
	comma, seen, err := sniff(br)
	if err != nil {
		return nil, err
	}
	cr := csv.NewReader(io.MultiReader(bytes.NewReader(seen), br))
	cr.Comma = comma
	cr.Comment = '#'
	cr.FieldsPerRecord = -1
	head, err := cr.Read()
	if errors.Is(err, io.EOF) {
		return nil, ErrEmpty
	}
	if err != nil {
		return nil, fmt.Errorf("header: %w", err)
	}
	line, _ := cr.FieldPos(0)
	out := &Reader{Comma: comma, HeaderLine: line, cr: cr}
	for i, h := range head {
		if i == 0 {
			h = strings.TrimPrefix(h, "\ufeff")
		}
		out.Header = append(out.Header, strings.TrimSpace(h))
	}
	cr.ReuseRecord = true
	return out, nil
}

// sniff reads lines up to the first that is neither blank nor a comment and returns
// the separator it uses and the bytes read.
func sniff(br *bufio.Reader) (rune, []byte, error) {
	var seen []byte
	for len(seen) <= maxHeader {
		line, err := br.ReadBytes('\n')
		seen = append(seen, line...)
		t := bytes.TrimSpace(bytes.TrimPrefix(line, []byte("\ufeff")))
		if len(t) > 0 && t[0] != '#' {
			if bytes.Count(t, []byte(";")) > bytes.Count(t, []byte(",")) {
				return ';', seen, nil
			}
			return ',', seen, nil
		}
		if errors.Is(err, io.EOF) {
			return 0, nil, ErrEmpty
		}
		if err != nil {
			return 0, nil, err
		}
	}
	return 0, nil, fmt.Errorf("no header row in the first %d bytes", maxHeader)
}

// Read returns the next row and its line number; io.EOF after the last. The slice is
// reused by the next call. A row the CSV rules cannot split (a stray quote, a quote
// never closed) is an error naming the line the row starts on.
func (r *Reader) Read() ([]string, int, error) {
	rec, err := r.cr.Read()
	if err != nil {
		var pe *csv.ParseError
		if errors.As(err, &pe) { // the line where the row starts, as a user looks for it
			return nil, pe.StartLine, fmt.Errorf("line %d: %v", pe.StartLine, pe.Err)
		}
		return nil, 0, err
	}
	line, _ := r.cr.FieldPos(0)
	return rec, line, nil
}

// Column returns the index of the first header name among names (compared without
// case), or -1.
func (r *Reader) Column(names ...string) int {
	for _, n := range names {
		for i, h := range r.Header {
			if strings.EqualFold(h, n) {
				return i
			}
		}
	}
	return -1
}

// Number parses a numeric cell: spaces trimmed, '.' or ',' as the decimal mark (a
// cell with one comma and no point). A cell with both marks groups thousands with the
// first and ends with the decimal mark (1.100,5 or 1,100.5: furnace temperatures as a
// spreadsheet formats them); groups must be of three digits. ok is false for an empty
// cell, text and infinities; NaN is never returned with ok.
func Number(s string) (v float64, ok bool) {
	s = strings.TrimSpace(s)
	if s == "" {
		return 0, false
	}
	point, comma := strings.LastIndexByte(s, '.'), strings.LastIndexByte(s, ',')
	switch {
	case point >= 0 && comma >= 0:
		dec, group := point, byte(',')
		if comma > point {
			dec, group = comma, '.'
		}
		if !thousands(s[:dec], group) {
			return 0, false
		}
		s = strings.ReplaceAll(s[:dec], string(group), "") + "." + s[dec+1:]
	case strings.Count(s, ",") == 1:
		s = strings.Replace(s, ",", ".", 1)
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, false
	}
	return v, true
}

// thousands reports whether the integer part ip (a sign allowed) is digits grouped by
// sep in threes after a first group of one to three.
func thousands(ip string, sep byte) bool {
	ip = strings.TrimLeft(ip, "+-")
	groups := strings.Split(ip, string(sep))
	if len(groups) < 2 || len(groups[0]) < 1 || len(groups[0]) > 3 {
		return false
	}
	for i, g := range groups {
		if (i > 0 && len(g) != 3) || strings.Trim(g, "0123456789") != "" {
			return false
		}
	}
	return true
}

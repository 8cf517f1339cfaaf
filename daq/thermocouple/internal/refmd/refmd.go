// Package refmd reads the CSV tables of the project's reference-value file
// (shared/reference/reference-values.md): every fenced ```csv block, keyed by the number
// of the "###" section it sits in (for example "1.2"). The thermocouple coefficient
// generator and the thermocouple tests both use it, so that the Go tables and the
// published values are compared by one parser.
package refmd

import (
	"bufio"
	"encoding/csv"
	"fmt"
	"io"
	"os"
	"strings"
)

// Block is one CSV table: its section number, the header row and the data rows.
type Block struct {
	// Section is the number of the enclosing "###" heading, e.g. "1.5".
	Section string
	// Line is the 1-based line number of the opening fence, for error messages.
	Line int
	// Header is the first row of the table.
	Header []string
	// Rows are the data rows, each with as many fields as Header.
	Rows [][]string
	// Text is the block's text between the fences, exactly as in the file.
	Text string
}

// Col returns the index of the named header column, or -1 if there is none.
func (b Block) Col(name string) int {
	for i, h := range b.Header {
		if h == name {
			return i
		}
	}
	return -1
}

// ReadFile parses the reference file at path; see Parse.
func ReadFile(path string) ([]Block, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("refmd: %w", err)
	}
	defer f.Close()
	blocks, err := Parse(f)
	if err != nil {
		return nil, fmt.Errorf("refmd: %s: %w", path, err)
	}
	return blocks, nil
}

// Parse returns every ```csv block of a markdown document, in order.
func Parse(r io.Reader) ([]Block, error) {
	var (
		blocks  []Block
		section string
		cur     *Block
		text    strings.Builder
	)
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 64*1024), 1024*1024)
	for n := 1; sc.Scan(); n++ {
		line := sc.Text()
		switch {
		case cur == nil && strings.HasPrefix(line, "### "):
			if f := strings.Fields(line); len(f) > 1 {
				section = f[1]
			}
		case cur == nil && strings.TrimSpace(line) == "```csv":
			cur = &Block{Section: section, Line: n}
			text.Reset()
		case cur != nil && strings.TrimSpace(line) == "```":
			cur.Text = text.String()
			if err := cur.parse(); err != nil {
				return nil, fmt.Errorf("csv block at line %d: %w", cur.Line, err)
			}
			blocks = append(blocks, *cur)
			cur = nil
		case cur != nil:
			text.WriteString(line)
			text.WriteByte('\n')
		}
	}
	if err := sc.Err(); err != nil {
		return nil, err
	}
	if cur != nil {
		return nil, fmt.Errorf("csv block at line %d is not closed", cur.Line)
	}
	return blocks, nil
}

func (b *Block) parse() error {
	records, err := csv.NewReader(strings.NewReader(b.Text)).ReadAll()
	if err != nil {
		return err
	}
	if len(records) == 0 {
		return fmt.Errorf("empty table")
	}
	b.Header, b.Rows = records[0], records[1:]
	return nil
}

// Find returns the blocks of one section, in order.
func Find(blocks []Block, section string) []Block {
	var out []Block
	for _, b := range blocks {
		if b.Section == section {
			out = append(out, b)
		}
	}
	return out
}

// FromCSV parses a CSV table given as text (for example a copy of a block saved to its
// own file) as a Block of the given section.
func FromCSV(section, text string) (Block, error) {
	b := Block{Section: section, Line: 1, Text: text}
	if err := b.parse(); err != nil {
		return Block{}, fmt.Errorf("refmd: section %s: %w", section, err)
	}
	return b, nil
}

// Copy names the testdata file that holds one CSV table of the reference file: the
// Index-th table of Section.
type Copy struct {
	Section string
	Index   int
	File    string
}

// Copies lists the tables of section 1 that the generator copies into testdata and the
// tests compare with the shared file.
var Copies = []Copy{
	{"1.2", 0, "forward-coefficients.csv"},
	{"1.3", 0, "inverse-coefficients.csv"},
	{"1.4", 0, "inverse-error-bands.csv"},
	{"1.5", 0, "table-check-values.csv"},
	{"1.5", 1, "inverse-check-values.csv"},
}

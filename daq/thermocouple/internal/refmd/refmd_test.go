package refmd

import (
	"strings"
	"testing"
)

const doc = "# Title\n\n### 1.2 Forward\n\ntext\n\n```csv\ntype,value,note\nK,1.5,\"a, b\"\nJ,2,x\n```\n\n" +
	"### 1.5 Checks\n```csv\na,b\n1,2\n```\nmore\n```csv\nc\n3\n```\n```go\nnot csv\n```\n"

func TestParse(t *testing.T) {
	blocks, err := Parse(strings.NewReader(doc))
	if err != nil {
		t.Fatal(err)
	}
	if len(blocks) != 3 {
		t.Fatalf("got %d blocks, want 3", len(blocks))
	}
	b := blocks[0]
	if b.Section != "1.2" || b.Line != 7 || len(b.Rows) != 2 || b.Rows[0][2] != "a, b" || b.Col("value") != 1 || b.Col("nope") != -1 {
		t.Errorf("first block = %+v", b)
	}
	if b.Text != "type,value,note\nK,1.5,\"a, b\"\nJ,2,x\n" {
		t.Errorf("first block text = %q", b.Text)
	}
	if f := Find(blocks, "1.5"); len(f) != 2 || f[1].Header[0] != "c" || f[1].Rows[0][0] != "3" {
		t.Errorf("Find(1.5) = %+v", f)
	}
}

func TestParseErrors(t *testing.T) {
	for _, in := range []string{
		"```csv\na,b\n1\n```\n", // ragged row
		"```csv\na,b\n",         // not closed
		"```csv\n```\n",         // empty
	} {
		if _, err := Parse(strings.NewReader(in)); err == nil {
			t.Errorf("Parse(%q): no error", in)
		}
	}
}

func TestFromCSV(t *testing.T) {
	b, err := FromCSV("1.3", "x,y\n1,2\n")
	if err != nil || b.Section != "1.3" || b.Rows[0][1] != "2" {
		t.Errorf("FromCSV = %+v, %v", b, err)
	}
}

// FuzzParse feeds arbitrary documents: no panic, and every block is rectangular.
func FuzzParse(f *testing.F) {
	f.Add(doc)
	f.Add("### \n```csv\n\"\n```\n")
	f.Fuzz(func(t *testing.T, s string) {
		blocks, err := Parse(strings.NewReader(s))
		if err != nil {
			return
		}
		for _, b := range blocks {
			for _, r := range b.Rows {
				if len(r) != len(b.Header) {
					t.Fatalf("row %v has %d fields, header %d", r, len(r), len(b.Header))
				}
			}
		}
	})
}

package daq

import (
	"errors"
	"fmt"
	"strings"
	"time"
)

// A clock_format with a '%' in it is a strftime-style format, as lab users write
// them ("%d/%m/%Y %H:%M:%S"); it is converted here to a Go time layout, which the line
// driver parses with.
//
// Written by hand rather than taken from a library: the one well-kept Go package that
// converts strftime to a Go layout (github.com/ncruces/go-strftime, already in the
// module graph through the SQLite driver) maps %d, %m, %H, %M, %S to the fixed-width
// elements ("02", "01", …) and %f to exactly six digits, so it refuses "3/12/2026
// 2:05:09 PM" and ".5 s", which Python's datetime.strptime, the reference users
// compare with, accepts; and its errors cannot name the token a user mistyped. The
// conversion below uses Go's variable-width elements instead, checks that the
// literal text between tokens cannot be mistaken for a Go layout element, and names
// the token it does not know.

// strftimeElems maps each strftime letter settle accepts to its Go layout element.
// The numeric elements are Go's variable-width ones ("1", "2", "15", "3", "4", "5",
// "__2"): like Python's strptime they read one or two digits (three for %j).
var strftimeElems = map[string]string{
	"Y": "2006", "y": "06", "m": "1", "d": "2", "j": "__2",
	"H": "15", "I": "3", "M": "4", "S": "5", "p": "PM", "f": "999999999",
	"b": "Jan", "B": "January", "a": "Mon", "A": "Monday",
	"z": "Z0700", ":z": "Z07:00",
}

// StrftimeTokens lists the tokens of a strftime-style clock_format, for messages and
// documentation.
const StrftimeTokens = "%Y %y %m %d %j %H %I %M %S %f %p %b %B %a %A %z %:z %%"

// clockRef is the time a converted layout is checked with: every field two digits or
// more and distinct (Tuesday 10 November 2009, day 314, 23:47:58.123456789 at +05:30),
// so that an element Go reads differently from the strftime token shows.
var clockRef = time.Date(2009, 11, 10, 23, 47, 58, 123456789, time.FixedZone("", 5*3600+30*60))

// strftimeRef is what each token prints for clockRef.
var strftimeRef = map[string]string{
	"Y": "2009", "y": "09", "m": "11", "d": "10", "j": "314",
	"H": "23", "I": "11", "M": "47", "S": "58", "p": "PM", "f": "123456789",
	"b": "Nov", "B": "November", "a": "Tue", "A": "Tuesday",
	"z": "+0530", ":z": "+05:30",
}

// StrftimeLayout converts a strftime-style format to a Go time layout. The error
// names the token or the text that cannot be converted.
func StrftimeLayout(format string) (string, error) {
	var layout, want, lit strings.Builder
	seen := map[string]bool{}
	for i := 0; i < len(format); i++ {
		if format[i] != '%' {
			lit.WriteByte(format[i])
			continue
		}
		tok, err := nextToken(format, i)
		if err != nil {
			return "", err
		}
		i += len(tok)
		if tok == "%" {
			lit.WriteByte('%')
			continue
		}
		if err := flushLiteral(&layout, &want, &lit); err != nil {
			return "", err
		}
		if tok == "f" && !strings.HasSuffix(layout.String(), ".") && !strings.HasSuffix(layout.String(), ",") {
			return "", errors.New(`%f (fractional seconds) must follow a "." or ",", as in %S.%f`)
		}
		if err := once(seen, tok, format); err != nil {
			return "", err
		}
		layout.WriteString(strftimeElems[tok])
		want.WriteString(strftimeRef[tok])
	}
	if err := flushLiteral(&layout, &want, &lit); err != nil {
		return "", err
	}
	if !strings.ContainsFunc("YymdjHIMSfbB", func(r rune) bool { return seen[string(r)] }) {
		return "", fmt.Errorf("%q has no date or time token; known: %s", format, StrftimeTokens)
	}
	if err := checkHours(seen); err != nil {
		return "", err
	}
	return checkLayout(format, layout.String(), want.String())
}

// once records tok in seen and refuses a token whose field was given before (Python's
// strptime refuses a repeated directive too, "redefinition of group name"): a second
// value of one field would silently win over the first. %z and %:z are one field.
func once(seen map[string]bool, tok, format string) error {
	if seen[tok] || (tok == "z" && seen[":z"]) || (tok == ":z" && seen["z"]) {
		return fmt.Errorf("%%%s repeats a field already in %q; give each of date, time and zone once", tok, format)
	}
	seen[tok] = true
	return nil
}

// nextToken returns the token after the '%' at format[i]: a letter, ":z" or "%".
func nextToken(format string, i int) (string, error) {
	rest := format[i+1:]
	switch {
	case rest == "":
		return "", errors.New(`a lone "%" ends the format; write %% for a percent sign`)
	case strings.HasPrefix(rest, ":z"):
		return ":z", nil
	case rest[0] == '%':
		return "%", nil
	}
	tok := rest[:1]
	if _, ok := strftimeElems[tok]; !ok {
		if tok == "Z" {
			return "", errors.New("%Z (a time zone name) cannot be read reliably; use %z (+0100) or %:z (+01:00), or leave the zone out to read the host's local time")
		}
		return "", fmt.Errorf("unknown token %%%s; known: %s", tok, StrftimeTokens)
	}
	return tok, nil
}

// flushLiteral moves the literal text collected in lit to the layout, after checking
// that Go's layout parser keeps it as text.
func flushLiteral(layout, want, lit *strings.Builder) error {
	s := lit.String()
	lit.Reset()
	if s == "" {
		return nil
	}
	if clockRef.Format(s) != s {
		return fmt.Errorf("the text %q between tokens would be read as part of a date or time by Go's parser (digits, and words such as Jan, Mon, PM, MST, cannot appear as plain text)", s)
	}
	layout.WriteString(s)
	want.WriteString(s)
	return nil
}

// checkHours refuses the combinations that Go and Python's strptime read differently:
// %I without %p (Python takes AM, Go the hour as written) and %p with %H.
func checkHours(seen map[string]bool) error {
	switch {
	case seen["I"] && !seen["p"]:
		return errors.New("%I (hour 1–12) needs %p (AM or PM); use %H for a 24-hour clock")
	case seen["p"] && !seen["I"]:
		return errors.New("%p (AM or PM) goes with %I (hour 1–12), not with %H")
	}
	return nil
}

// checkLayout checks that layout prints clockRef as the strftime format would (so Go
// read every element and every piece of text as meant) and reads it back.
func checkLayout(format, layout, want string) (string, error) {
	got := clockRef.Format(layout)
	if got != want {
		return "", fmt.Errorf("tokens run together: Go reads the layout %q as %q, not %q; put a separator between them", layout, got, want)
	}
	if _, err := time.Parse(layout, got); err != nil {
		return "", fmt.Errorf("the layout %q cannot read its own output %q: %v", layout, got, err)
	}
	return layout, nil
}

// namedLayouts are the clock formats with a name, lower case; "" and "seconds" are the
// relative clock and "unix" seconds since 1970, which have no layout.
var namedLayouts = map[string]string{
	"rfc3339":     time.RFC3339,
	"rfc3339nano": time.RFC3339Nano,
	"datetime":    time.DateTime,
}

// ClockLayout returns the Go time layout for a clock_format. It returns "" and true
// for the number formats ("", "seconds", "unix"), the layout and true for a named
// format, a strftime-style format (with '%') or a Go layout with at least a date or
// time element, and false otherwise. ClockFormatLayout says why a format is refused.
func ClockLayout(format string) (string, bool) {
	layout, err := ClockFormatLayout(format)
	return layout, err == nil
}

// ClockFormatLayout is ClockLayout with the reason a format is refused: for a
// strftime-style format, the token or text that cannot be converted.
func ClockFormatLayout(format string) (string, error) {
	switch lower := strings.ToLower(format); lower {
	case "", "seconds", "unix":
		return "", nil
	default:
		if l, ok := namedLayouts[lower]; ok {
			return l, nil
		}
	}
	layout := format
	if strings.Contains(format, "%") {
		l, err := StrftimeLayout(format)
		if err != nil {
			return "", err
		}
		layout = l
	} else {
		// A layout must change when a time is formatted with it, and read back.
		ref := time.Date(2009, 11, 10, 23, 0, 1, 0, time.UTC)
		s := ref.Format(format)
		if s == format {
			return "", errNotClockFormat
		}
		if _, err := time.Parse(format, s); err != nil {
			return "", errNotClockFormat
		}
	}
	if err := completeLayout(format, layout); err != nil {
		return "", err
	}
	return utcSuffix(layout), nil
}

// completeLayout refuses a layout that cannot place a reading in time: without a year,
// month, day, hour or minute every reading would get a made-up date (year 0) or lose
// its hour, and nothing downstream could tell.
func completeLayout(format, layout string) error {
	ref := time.Date(2026, 3, 14, 14, 5, 9, 0, time.UTC)
	var missing []string
	for _, c := range []struct {
		what string
		t    time.Time
	}{
		{"the year", ref.AddDate(1, 0, 0)}, {"the month", ref.AddDate(0, 1, 0)}, {"the day", ref.AddDate(0, 0, 1)},
		{"the hour", ref.Add(time.Hour)}, {"the minutes", ref.Add(time.Minute)},
	} {
		if ref.Format(layout) == c.t.Format(layout) {
			missing = append(missing, c.what)
		}
	}
	if len(missing) == 0 {
		return nil
	}
	return fmt.Errorf("%q leaves out %s: every reading would get a made-up date or time; give the logger's full date and time, or leave clock_column out (settle then stamps each line as it arrives)",
		format, strings.Join(missing, ", "))
}

// utcSuffix makes a layout that ends in the literal text Z, UTC or GMT (a logger that
// writes its clock in UTC and says so) read its times as UTC: as plain text the time
// would be taken as the host's local time, off by the host's UTC offset.
func utcSuffix(layout string) string {
	switch {
	case strings.HasSuffix(layout, "Z"):
		return layout[:len(layout)-1] + "Z07:00"
	case strings.HasSuffix(layout, "UTC"), strings.HasSuffix(layout, "GMT"):
		return layout[:len(layout)-3] + "MST"
	}
	return layout
}

var errNotClockFormat = errors.New(`want seconds, unix, rfc3339, a strftime-style format such as "%Y-%m-%d %H:%M:%S" or a Go time layout such as "2006-01-02 15:04:05"`)

package web

import (
	"io/fs"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// palette reads the custom properties of one theme block of style.css.
func palette(t *testing.T, css, selector string) map[string]string {
	t.Helper()
	i := strings.Index(css, selector+" {")
	if i < 0 {
		t.Fatalf("style.css has no %q block", selector)
	}
	block := css[i : i+strings.Index(css[i:], "}")]
	out := map[string]string{}
	for _, m := range regexp.MustCompile(`--([a-z-]+):\s*(#[0-9a-fA-F]{6})\s*;`).FindAllStringSubmatch(block, -1) {
		out[m[1]] = m[2]
	}
	return out
}

// luminance is the relative luminance of an sRGB colour "#rrggbb" as WCAG 2.1 defines
// it (W3C Recommendation, "relative luminance"; the 0.03928 threshold as published).
func luminance(hex string) float64 {
	var l [3]float64
	for i := range 3 {
		v, _ := strconv.ParseUint(hex[1+2*i:3+2*i], 16, 8)
		c := float64(v) / 255
		if c <= 0.03928 {
			c /= 12.92
		} else {
			c = math.Pow((c+0.055)/1.055, 2.4)
		}
		l[i] = c
	}
	return 0.2126*l[0] + 0.7152*l[1] + 0.0722*l[2]
}

// contrast is the WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05).
func contrast(a, b string) float64 {
	la, lb := luminance(a), luminance(b)
	return (math.Max(la, lb) + 0.05) / (math.Min(la, lb) + 0.05)
}

func TestContrastFormula(t *testing.T) {
	// Black on white is 21:1 and a colour on itself 1:1 by the definition; #767676 on
	// white is the well-known lightest grey that passes 4.5:1 (4.54:1, from memory).
	for _, c := range []struct {
		a, b string
		want float64
	}{{"#000000", "#ffffff", 21}, {"#b42318", "#b42318", 1}, {"#767676", "#ffffff", 4.54}} {
		if got := contrast(c.a, c.b); math.Abs(got-c.want) > 0.01 {
			t.Errorf("contrast(%s, %s) = %.3f, want %.2f", c.a, c.b, got, c.want)
		}
	}
}

// TestPaletteContrast checks every text colour of both themes against the ground it is
// drawn on at WCAG 2.1's 4.5:1 for normal text: the ink and muted text on the page and
// the cards, the white words on each state strip, and each state's "ink" (due times,
// links, empty strips) on the card.
func TestPaletteContrast(t *testing.T) {
	b, err := fs.ReadFile(FS, "static/style.css")
	if err != nil {
		t.Fatal(err)
	}
	css := string(b)
	states := []string{"hot", "nearly", "ready", "holding", "fault", "empty", "wait"}
	for _, theme := range []string{`:root, [data-theme="light"]`, `[data-theme="dark"]`} {
		p := palette(t, css, theme)
		type pair struct{ fg, bg string }
		pairs := []pair{{"ink", "bg"}, {"ink", "card"}, {"muted", "card"}, {"muted", "bg"}, {"room", "card"}, {"card", "ink"}}
		for _, s := range states {
			pairs = append(pairs, pair{"on-st", "st-" + s}, pair{"st-" + s + "-ink", "card"})
		}
		for _, pr := range pairs {
			fg, bg := p[pr.fg], p[pr.bg]
			if fg == "" || bg == "" {
				t.Errorf("%s: --%s or --%s missing", theme, pr.fg, pr.bg)
				continue
			}
			c := contrast(fg, bg)
			t.Logf("%s: --%s %s on --%s %s: %.2f:1", theme, pr.fg, fg, pr.bg, bg, c)
			if c < 4.5 {
				t.Errorf("%s: --%s %s on --%s %s is %.2f:1, below 4.5:1", theme, pr.fg, fg, pr.bg, bg, c)
			}
		}
		// The identity is our own: none of the accents the issue found borrowed.
		for name, v := range p {
			for _, banned := range []string{"#7ee787", "#9ecbff", "#0f1319", "#171d26"} {
				if strings.EqualFold(v, banned) {
					t.Errorf("%s: --%s reuses %s", theme, name, banned)
				}
			}
		}
	}
}

// TestStatesDistinct checks that the state colours differ from each other in each theme
// by more than a hue nobody could tell apart (and colour is never alone: glyph and word).
func TestStatesDistinct(t *testing.T) {
	b, _ := fs.ReadFile(FS, "static/style.css")
	p := palette(t, string(b), `:root, [data-theme="light"]`)
	seen := map[string]string{}
	for _, s := range []string{"hot", "nearly", "ready", "holding", "fault", "empty"} {
		v := strings.ToLower(p["st-"+s])
		if other, ok := seen[v]; ok {
			t.Errorf("states %s and %s share %s", s, other, v)
		}
		seen[v] = s
	}
}

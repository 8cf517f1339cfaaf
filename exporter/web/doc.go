// Package web holds the status page's assets, embedded in the binary so the page works
// on a lab network with no internet: the HTML template, the stylesheet, the script that
// draws the cards and plots (plain canvas, no third-party code) and an icon.
package web

import "embed"

// FS holds index.html (an html/template) and everything under static/.
//
//go:embed index.html static
var FS embed.FS

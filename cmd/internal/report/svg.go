package report

import (
	"bytes"
	"html/template"
	"regexp"
)

var (
	xmlProlog  = regexp.MustCompile(`(?s)^\s*<\?xml.*?\?>\s*`)
	xmlComment = regexp.MustCompile(`(?s)<!--.*?-->\s*`)
	doctype    = regexp.MustCompile(`(?is)<!DOCTYPE[^>]*>\s*`)
	// Anything that could run or fetch: the plots package writes none of
	// these, so a plot that has one is refused rather than inlined.
	unsafeSVG = regexp.MustCompile(`(?i)<\s*(script|foreignObject|iframe|object|embed|use|a\b)|\son[a-z]+\s*=|javascript:|(?:xlink:)?href\s*=\s*["']\s*(?:https?:|//)`)
	xmlns     = regexp.MustCompile(`\s+xmlns(?::\w+)?="[^"]*"`)
	svgSize   = regexp.MustCompile(`^(<svg\b[^>]*?)\s(width="[^"]*"\s+height="[^"]*")`)
)

// inlineSVG prepares an SVG document for inlining in the HTML: the XML
// prolog, comments, doctype and namespace declarations go, and the fixed width and height give way
// to the stylesheet (the viewBox keeps the aspect ratio). It refuses an SVG
// that holds scripts, event handlers or references to the network.
func inlineSVG(b []byte) (template.HTML, bool) {
	b = xmlProlog.ReplaceAll(b, nil)
	b = doctype.ReplaceAll(b, nil)
	b = xmlComment.ReplaceAll(b, nil)
	b = bytes.TrimSpace(b)
	if !bytes.HasPrefix(b, []byte("<svg")) || unsafeSVG.Match(b) {
		return "", false
	}
	// The HTML parser puts <svg> in the SVG namespace by itself; the
	// declarations are noise (and look like addresses to fetch).
	b = xmlns.ReplaceAll(b, nil)
	b = svgSize.ReplaceAll(b, []byte(`$1 role="img"`))
	return template.HTML(b), true
}

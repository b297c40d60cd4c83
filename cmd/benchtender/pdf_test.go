package main

import (
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// A printed PDF read through its structure tree: Chromium writes tagged
// PDF (ISO 32000-1, section 14.8), where each <figure> of the page is a
// structure element of type Figure whose content items name the pages
// they are drawn on (/Pg). A figure whose items lie on two pages was split
// by a page break.
type printed struct {
	pages   int
	figures [][]int // for each outermost Figure, the pages it touches
}

var (
	pdfObject = regexp.MustCompile(`(?s)(\d+) 0 obj\s*(.*?)endobj`)
	pdfPage   = regexp.MustCompile(`/Type /Page[^s]`)
	pdfPg     = regexp.MustCompile(`/Pg (\d+) 0 R`)
	pdfKids   = regexp.MustCompile(`(?s)/K (\[.*?\]|\d+ 0 R)`)
	pdfRef    = regexp.MustCompile(`(\d+) 0 R`)
	pdfParent = regexp.MustCompile(`/P (\d+) 0 R`)
)

func readPrinted(t *testing.T, path string) printed {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	objs := map[int]string{}
	for _, m := range pdfObject.FindAllStringSubmatch(string(b), -1) {
		n, _ := strconv.Atoi(m[1])
		objs[n] = m[2]
	}
	isFigure := func(n int) bool { return strings.Contains(objs[n], "/S /Figure") }
	// walk gathers the pages that element n and everything below it are
	// drawn on.
	var walk func(n int, acc, seen map[int]bool)
	walk = func(n int, acc, seen map[int]bool) {
		if seen[n] {
			return
		}
		seen[n] = true
		o := objs[n]
		for _, m := range pdfPg.FindAllStringSubmatch(o, -1) {
			p, _ := strconv.Atoi(m[1])
			acc[p] = true
		}
		if k := pdfKids.FindStringSubmatch(o); k != nil {
			for _, r := range pdfRef.FindAllStringSubmatch(k[1], -1) {
				c, _ := strconv.Atoi(r[1])
				walk(c, acc, seen)
			}
		}
	}
	out := printed{pages: len(pdfPage.FindAllIndex(b, -1))}
	for n, o := range objs {
		if !isFigure(n) {
			continue
		}
		if p := pdfParent.FindStringSubmatch(o); p != nil {
			if pn, _ := strconv.Atoi(p[1]); isFigure(pn) {
				continue // an image inside a figure: counted with it
			}
		}
		acc := map[int]bool{}
		walk(n, acc, map[int]bool{})
		var pages []int
		for p := range acc {
			pages = append(pages, p)
		}
		out.figures = append(out.figures, pages)
	}
	return out
}

// The reader can tell a split figure: a figure taller than a page, printed
// by the same browser, touches two pages.
func checkSplitIsSeen(t *testing.T, bin string) {
	t.Helper()
	dir := t.TempDir()
	html := filepath.Join(dir, "tall.html")
	os.WriteFile(html, []byte(`<!doctype html><html><body><p>before</p><figure><div style="height:1500px;border:1px solid #000">tall</div><figcaption>a figure taller than an A4 page</figcaption></figure></body></html>`), 0o644)
	pdf := filepath.Join(dir, "tall.pdf")
	if err := printPDF(t.Context(), html, pdf); err != nil {
		t.Fatal(err)
	}
	p := readPrinted(t, pdf)
	if len(p.figures) != 1 || len(p.figures[0]) < 2 {
		t.Fatalf("the control figure taller than a page reads as %v over %d pages: the check cannot see a split", p.figures, p.pages)
	}
}

package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"time"

	"benchtender/console"
)

// cmdReport writes the campaign's report: one self-contained HTML file
// with the figures inline, for a lab notebook.
func cmdReport(ctx context.Context, args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("report", flag.ContinueOnError)
	config := fs.String("config", "", "configuration file")
	out := fs.String("out", "report.html", "file to write")
	pairX := fs.String("x", "", "first factor of the 2-D optimum map")
	pairY := fs.String("y", "", "second factor of the 2-D optimum map")
	pdf := fs.String("pdf", "", "also print the report to this PDF file, with Chromium, Chrome or Edge where installed")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	path, err := configArg(*config, pos, "report")
	if err != nil {
		return err
	}
	cfg, err := loadConfig(path)
	if err != nil {
		return err
	}
	v, err := console.Build(ctx, cfg, console.BuildOptions{Model: true, PairX: *pairX, PairY: *pairY, ConfigPath: path, Software: versionLine()})
	if err != nil {
		return err
	}
	if err := writeOut(*out, func(w io.Writer) error { return console.Report(w, v) }); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	if *pdf != "" {
		if err := printPDF(ctx, *out, *pdf); err != nil {
			return fmt.Errorf("report --pdf: %w (the HTML report is written to %s: print it from a browser)", err, *out)
		}
	}
	fmt.Fprintf(stdout, "report of campaign %s (%d runs, %d figures) written to %s\n", cfg.Campaign.Name, len(v.Runs), len(v.Figures), *out)
	if *pdf != "" {
		fmt.Fprintf(stdout, "printed to %s\n", *pdf)
	}
	return nil
}

// writeOut writes a file whole or not at all: into a temp file beside it,
// renamed into place once complete.
func writeOut(out string, write func(io.Writer) error) error {
	tmp, err := os.CreateTemp(filepath.Dir(out), ".benchtender-out-*.tmp")
	if err != nil {
		return err
	}
	defer os.Remove(tmp.Name())
	if err := tmp.Chmod(0o644); err != nil {
		tmp.Close()
		return err
	}
	if err := write(tmp); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Close(); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), out)
}

// printPDF prints an HTML file to PDF with a headless Chromium-family
// browser (its print stylesheet keeps figures whole and repeats table
// headers on every page).
func printPDF(ctx context.Context, html, pdf string) error {
	browser, err := findBrowser()
	if err != nil {
		return err
	}
	src, err := filepath.Abs(html)
	if err != nil {
		return err
	}
	dst, err := filepath.Abs(pdf)
	if err != nil {
		return err
	}
	args := []string{"--headless", "--disable-gpu", "--no-first-run", "--no-pdf-header-footer", "--print-to-pdf-no-header",
		"--user-data-dir=" + filepath.Join(os.TempDir(), "benchtender-pdf-profile"), "--print-to-pdf=" + dst}
	if runtime.GOOS == "linux" && os.Geteuid() == 0 {
		args = append(args, "--no-sandbox") // Chromium refuses to run as root with its sandbox
	}
	ctx, cancel := context.WithTimeout(ctx, 2*time.Minute)
	defer cancel()
	os.Remove(dst)
	out, err := exec.CommandContext(ctx, browser, append(args, "file://"+filepath.ToSlash(src))...).CombinedOutput()
	if _, serr := os.Stat(dst); err != nil || serr != nil {
		return fmt.Errorf("%s did not print the PDF: %v %v\n%s", browser, err, serr, lastLines(string(out), 5))
	}
	return nil
}

// findBrowser looks for a Chromium-family browser: BENCHTENDER_CHROMIUM,
// then the usual names on the PATH, then Edge and Chrome where Windows
// installs them.
func findBrowser() (string, error) {
	if p := os.Getenv("BENCHTENDER_CHROMIUM"); p != "" {
		found, err := exec.LookPath(p)
		if err != nil {
			return "", fmt.Errorf("BENCHTENDER_CHROMIUM names %s, which cannot be run: %w", p, err)
		}
		return found, nil
	}
	for _, name := range []string{"chromium", "chromium-browser", "google-chrome", "google-chrome-stable", "msedge", "microsoft-edge"} {
		if p, err := exec.LookPath(name); err == nil {
			return p, nil
		}
	}
	if runtime.GOOS == "windows" {
		for _, env := range []string{"ProgramFiles(x86)", "ProgramFiles", "LocalAppData"} {
			for _, rel := range []string{`Microsoft\Edge\Application\msedge.exe`, `Google\Chrome\Application\chrome.exe`} {
				if base := os.Getenv(env); base != "" {
					if p := filepath.Join(base, rel); fileExists(p) {
						return p, nil
					}
				}
			}
		}
	}
	return "", errors.New("no Chromium, Chrome or Edge found; install one, or set BENCHTENDER_CHROMIUM to the browser's path")
}

func fileExists(p string) bool { _, err := os.Stat(p); return err == nil }

func lastLines(s string, n int) string {
	lines := strings.Split(strings.TrimSpace(s), "\n")
	return strings.Join(lines[max(0, len(lines)-n):], "\n")
}

package console

import (
	"fmt"
	"html/template"
	"io"
)

// Report writes the view as one self-contained HTML page: the style sheet
// inline and every figure as an inline image, so the file can be filed in
// a lab notebook and opened anywhere without the daemon.
func Report(w io.Writer, v *View) error {
	t, err := template.New("").Funcs(funcs()).ParseFS(assets, "templates/*.html")
	if err != nil {
		return fmt.Errorf("report: templates: %w", err)
	}
	css, err := assets.ReadFile("static/style.css")
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	d := pageData{Page: "report", V: v, Report: true, CSS: template.CSS(css)}
	if err := t.ExecuteTemplate(w, "report", d); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	return nil
}

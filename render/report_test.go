package render

import (
	"bytes"
	"encoding/xml"
	"io"
	"regexp"
	"strings"
	"testing"
)

func sampleReport(t *testing.T) *Report {
	t.Helper()
	v := tinyVolume()
	img, err := RenderSlice(v, PlaneXY, 1, SliceOptions{PixelsPerVoxel: 8})
	if err != nil {
		t.Fatal(err)
	}
	var png bytes.Buffer
	if err := (&pngEnc).Encode(&png, img); err != nil {
		t.Fatal(err)
	}
	s := synthSeries(40, 0.45)
	figs, err := RenderPlots(s, PlotOptions{WC: 0.45, SetTimeH: 5})
	if err != nil {
		t.Fatal(err)
	}
	r := &Report{
		Title:      "Demo mix <A&B> \"north kiln\"",
		Version:    "v0.0-test",
		Mix:        []Row{{"w/c", "0.45"}, {"cement", "invented Type I <demo>"}},
		Results:    KeyResults(s, 5, -1),
		Slices:     []Image{{Name: "xy", Caption: "xy slice <mid>", PNG: png.Bytes()}},
		ConfigText: "seed = 7\n[mix]\nw_c = 0.45 # <script>alert(1)</script>\n",
	}
	for _, f := range figs {
		r.Plots = append(r.Plots, Image{Name: f.Name, Caption: f.Title, PNG: f.PNG})
	}
	return r
}

func TestReportSelfContained(t *testing.T) {
	var b bytes.Buffer
	if err := WriteReport(&b, sampleReport(t)); err != nil {
		t.Fatal(err)
	}
	html := b.String()
	if !strings.Contains(html, Caution) {
		t.Error("caution missing")
	}
	if strings.Contains(html, "<script") || strings.Contains(html, "<A&B>") {
		t.Error("text not escaped")
	}
	// Every src= and href= is a data: URI or a #anchor.
	for _, m := range regexp.MustCompile(`(?i)\b(src|href)\s*=\s*"([^"]*)"`).FindAllStringSubmatch(html, -1) {
		if !strings.HasPrefix(m[2], "data:image/png;base64,") && !strings.HasPrefix(m[2], "#") {
			t.Errorf("%s=%.60q points outside the page", m[1], m[2])
		}
	}
	for _, bad := range []string{"url(", "@import", "http://", "https://"} {
		if strings.Contains(html, bad) {
			t.Errorf("page contains %q", bad)
		}
	}
	if n := strings.Count(html, "data:image/png;base64,"); n != 8 {
		t.Errorf("%d embedded images; want 8 (7 plots and 1 slice)", n)
	}
	// Well-formed: encoding/xml in non-strict HTML mode, and a tag-balance
	// check of the non-void elements.
	d := xml.NewDecoder(strings.NewReader(html))
	d.Strict = false
	d.AutoClose = xml.HTMLAutoClose
	d.Entity = xml.HTMLEntity
	var stack []string
	void := map[string]bool{"meta": true, "img": true, "br": true, "link": true, "hr": true}
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("html does not parse: %v", err)
		}
		switch e := tok.(type) {
		case xml.StartElement:
			if !void[e.Name.Local] {
				stack = append(stack, e.Name.Local)
			}
		case xml.EndElement:
			if void[e.Name.Local] {
				continue
			}
			if len(stack) == 0 || stack[len(stack)-1] != e.Name.Local {
				t.Fatalf("</%s> closes %v", e.Name.Local, stack)
			}
			stack = stack[:len(stack)-1]
		}
	}
	if len(stack) != 0 {
		t.Errorf("unclosed elements %v", stack)
	}
	// Anchors point at ids that exist.
	for _, m := range regexp.MustCompile(`href="#([^"]+)"`).FindAllStringSubmatch(html, -1) {
		if !strings.Contains(html, `id="`+m[1]+`"`) {
			t.Errorf("anchor #%s has no target", m[1])
		}
	}
}

func TestReportRejectsBadImages(t *testing.T) {
	r := &Report{Plots: []Image{{Name: "a b", PNG: []byte("\x89PNG\r\n\x1a\n")}}}
	if err := WriteReport(io.Discard, r); err == nil {
		t.Error("bad image name: no error")
	}
	r = &Report{Plots: []Image{{Name: "ok", PNG: []byte("GIF89a..")}}}
	if err := WriteReport(io.Discard, r); err == nil {
		t.Error("non-PNG image: no error")
	}
}

func TestKeyResults(t *testing.T) {
	s := synthSeries(100, 0.45)
	rows := KeyResults(s, 5.5, 0)
	got := map[string]string{}
	for _, r := range rows {
		got[r.Label] = r.Value
	}
	if got[SetPointLabel] != "5 h 30 min" || got["Capillary pores depercolate"] != "not reached" {
		t.Errorf("rows %v", rows)
	}
	for _, k := range []string{"Degree of hydration at 1 d", "Heat at 28 d"} {
		if got[k] == "" {
			t.Errorf("missing %q in %v", k, rows)
		}
	}
}

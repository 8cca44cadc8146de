package render

import (
	"sync"

	"github.com/fogleman/gg"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/font/liberation"
)

var (
	fontOnce  sync.Once
	fontCache *font.Cache
)

// face returns a Liberation Sans face of the given pixel size (rendered at
// 72 dpi, so points are pixels). Faces are not safe for concurrent use, so
// each image gets its own.
func face(sizePX float64, bold bool) font.Face {
	fontOnce.Do(func() { fontCache = font.NewCache(liberation.Collection()) })
	f := font.Font{Typeface: "Liberation", Variant: "Sans"}
	if bold {
		f.Weight = 3 // font.WeightBold (CSS 700) of golang.org/x/image/font
	}
	return fontCache.Lookup(f, font.Length(sizePX))
}

// fonts holds the faces one image uses.
type fonts struct{ text, bold, title font.Face }

func newFonts() *fonts {
	return &fonts{text: face(14, false), bold: face(14, true), title: face(17, true)}
}

// set makes f the current face of dc.
func (fs *fonts) set(dc *gg.Context, f font.Face) { dc.SetFontFace(f.FontFace(72)) }

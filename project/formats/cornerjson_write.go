package formats

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
)

// WriteCornerJSON writes ds as corner/size JSON. Images, categories and
// annotations get ids from 1 in the order of ds.Images, ds.Classes and the
// boxes; area is width*height; iscrowd is 1 for crowd boxes; a box with a
// score carries it as "score". Stored numbers (x, y, score) are written so
// that they read back exactly; the computed width, height and area are
// rounded to PixelDecimals first, so that no float noise reaches the file.
// The output depends only on ds. It refuses a dataset that
// ReadCornerJSON would reject (unknown or duplicate classes, duplicate or
// empty image names, non-positive image sizes, invalid boxes).
func WriteCornerJSON(w io.Writer, ds *Dataset) error {
	if ds == nil {
		return errors.New("write corner/size JSON: no dataset")
	}
	classID := make(map[string]int, len(ds.Classes))
	for i, c := range ds.Classes {
		if c == "" {
			return fmt.Errorf("write corner/size JSON: class %d has no name", i+1)
		}
		if _, dup := classID[c]; dup {
			return fmt.Errorf("write corner/size JSON: class %q is listed twice", c)
		}
		classID[c] = i + 1
	}
	names := make(map[string]bool, len(ds.Images))
	for _, im := range ds.Images {
		if im.Name == "" {
			return errors.New("write corner/size JSON: an image has no file name")
		}
		if names[im.Name] {
			return fmt.Errorf("write corner/size JSON: image %q is listed twice", im.Name)
		}
		names[im.Name] = true
		if im.Width <= 0 || im.Height <= 0 || im.Width > math.MaxInt32 || im.Height > math.MaxInt32 {
			return fmt.Errorf("write corner/size JSON: image %q: size %dx%d is not positive", im.Name, im.Width, im.Height)
		}
		for j, b := range im.Boxes {
			if _, ok := classID[b.Class]; !ok {
				return fmt.Errorf("write corner/size JSON: image %q box %d: class %q is not in the class list", im.Name, j+1, b.Class)
			}
			x, y, bw, bh := fromBox(b.Box)
			if !b.Box.Valid() || !toBox(x, y, bw, bh).Valid() || math.IsInf(bw, 0) || math.IsInf(bh, 0) || math.IsInf(bw*bh, 0) {
				return fmt.Errorf("write corner/size JSON: image %q box %d: %v is not a valid box", im.Name, j+1, b.Box)
			}
			if b.HasScore && !(b.Score >= 0 && b.Score <= 1) {
				return fmt.Errorf("write corner/size JSON: image %q box %d: score %v is not within [0,1]", im.Name, j+1, b.Score)
			}
		}
	}

	bw := bufio.NewWriterSize(w, 64<<10)
	var line []byte
	flushLine := func(last bool) {
		if !last {
			line = append(line, ',')
		}
		line = append(line, '\n')
		bw.Write(line)
		line = line[:0]
	}
	bw.WriteString("{\n  \"images\": [\n")
	for i, im := range ds.Images {
		line = append(line, `    {"id": `...)
		line = strconv.AppendInt(line, int64(i+1), 10)
		line = append(line, `, "file_name": `...)
		line = appendJSONString(line, im.Name)
		line = append(line, `, "width": `...)
		line = strconv.AppendInt(line, int64(im.Width), 10)
		line = append(line, `, "height": `...)
		line = strconv.AppendInt(line, int64(im.Height), 10)
		line = append(line, '}')
		flushLine(i == len(ds.Images)-1)
	}
	bw.WriteString("  ],\n  \"categories\": [\n")
	for i, c := range ds.Classes {
		line = append(line, `    {"id": `...)
		line = strconv.AppendInt(line, int64(i+1), 10)
		line = append(line, `, "name": `...)
		line = appendJSONString(line, c)
		line = append(line, '}')
		flushLine(i == len(ds.Classes)-1)
	}
	bw.WriteString("  ],\n  \"annotations\": [\n")
	total := 0
	for _, im := range ds.Images {
		total += len(im.Boxes)
	}
	id := 0
	for i, im := range ds.Images {
		for _, b := range im.Boxes {
			id++
			x, y, w, h := fromBox(b.Box)
			// x and y are stored values; w, h and the area are computed.
			w, h = roundSide(w, b.Box.X0, b.Box.X1), roundSide(h, b.Box.Y0, b.Box.Y1)
			if w <= 0 || h <= 0 {
				return fmt.Errorf("write corner/size JSON: image %q: box %v has no width or no height", im.Name, b.Box)
			}
			line = append(line, `    {"id": `...)
			line = strconv.AppendInt(line, int64(id), 10)
			line = append(line, `, "image_id": `...)
			line = strconv.AppendInt(line, int64(i+1), 10)
			line = append(line, `, "category_id": `...)
			line = strconv.AppendInt(line, int64(classID[b.Class]), 10)
			line = append(line, `, "bbox": [`...)
			for k, v := range [4]float64{x, y, w, h} {
				if k > 0 {
					line = append(line, ", "...)
				}
				line = appendJSONFloat(line, v)
			}
			line = append(line, `], "area": `...)
			line = appendJSONFloat(line, roundPixels(w*h))
			line = append(line, `, "iscrowd": `...)
			if b.Crowd {
				line = append(line, '1')
			} else {
				line = append(line, '0')
			}
			if b.HasScore {
				line = append(line, `, "score": `...)
				line = appendJSONFloat(line, b.Score)
			}
			line = append(line, '}')
			flushLine(id == total)
		}
	}
	bw.WriteString("  ]\n}\n")
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("write corner/size JSON: %w", err)
	}
	return nil
}

// appendJSONString appends s as a JSON string.
func appendJSONString(b []byte, s string) []byte {
	q, err := json.Marshal(s)
	if err != nil { // cannot happen for a string
		return append(b, `""`...)
	}
	return append(b, q...)
}

// appendJSONFloat appends a finite float the way encoding/json does: the
// shortest decimal that reads back to the same float64, in plain notation
// unless very small or very large.
func appendJSONFloat(b []byte, v float64) []byte {
	if v == 0 {
		return append(b, '0')
	}
	abs := math.Abs(v)
	format := byte('f')
	if abs < 1e-6 || abs >= 1e21 {
		format = 'e'
	}
	return strconv.AppendFloat(b, v, format, -1, 64)
}

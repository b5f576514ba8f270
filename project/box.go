// Package project holds Boxwright's domain: images, classes, annotators,
// labels, model suggestions and the geometry of bounding boxes, plus the
// storage interfaces the rest of the program needs. It knows nothing of SQL
// or of the GUI toolkit.
package project

import (
	"fmt"
	"math"
)

// Box is an axis-aligned bounding box in continuous pixel coordinates of the
// image as displayed (after EXIF orientation). (0,0) is the top-left corner of
// the top-left pixel; a box covering exactly pixel (0,0) is {0,0,1,1}.
// X0,Y0 is the top-left corner and X1,Y1 the bottom-right; a valid box has
// X1 > X0 and Y1 > Y0.
type Box struct {
	X0, Y0, X1, Y1 float64
}

// Rect returns the box with corners (x0,y0) and (x1,y1) in any order.
func Rect(x0, y0, x1, y1 float64) Box {
	if x1 < x0 {
		x0, x1 = x1, x0
	}
	if y1 < y0 {
		y0, y1 = y1, y0
	}
	return Box{x0, y0, x1, y1}
}

// Width is X1-X0, or 0 for an empty box.
func (b Box) Width() float64 { return math.Max(0, b.X1-b.X0) }

// Height is Y1-Y0, or 0 for an empty box.
func (b Box) Height() float64 { return math.Max(0, b.Y1-b.Y0) }

// Area is Width*Height; 0 for an empty box.
func (b Box) Area() float64 { return b.Width() * b.Height() }

// Center returns the centre point of the box.
func (b Box) Center() (x, y float64) { return (b.X0 + b.X1) / 2, (b.Y0 + b.Y1) / 2 }

// Empty reports whether the box encloses no area.
func (b Box) Empty() bool { return !(b.X1 > b.X0 && b.Y1 > b.Y0) }

// Valid reports whether all coordinates are finite and the box has positive
// width and height.
func (b Box) Valid() bool {
	for _, v := range [4]float64{b.X0, b.Y0, b.X1, b.Y1} {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return !b.Empty()
}

// Intersect returns the largest box contained by both b and o, or the zero
// Box if they do not overlap (boxes that only touch do not overlap).
func (b Box) Intersect(o Box) Box {
	r := Box{math.Max(b.X0, o.X0), math.Max(b.Y0, o.Y0), math.Min(b.X1, o.X1), math.Min(b.Y1, o.Y1)}
	if r.Empty() {
		return Box{}
	}
	return r
}

// Union returns the smallest box that contains both b and o. An empty box
// contributes nothing.
func (b Box) Union(o Box) Box {
	if b.Empty() {
		return o
	}
	if o.Empty() {
		return b
	}
	return Box{math.Min(b.X0, o.X0), math.Min(b.Y0, o.Y0), math.Max(b.X1, o.X1), math.Max(b.Y1, o.Y1)}
}

// IoU returns the intersection over union of the two boxes' areas, in
// [0,1]. Two empty boxes have IoU 0.
func (b Box) IoU(o Box) float64 {
	inter := b.Intersect(o).Area()
	if inter == 0 {
		return 0
	}
	return inter / (b.Area() + o.Area() - inter)
}

// Clamp returns the part of b that lies inside an image of the given size,
// which may be empty.
func (b Box) Clamp(width, height float64) Box {
	return b.Intersect(Box{0, 0, width, height})
}

// Contains reports whether the point lies inside the box, edges included.
func (b Box) Contains(x, y float64) bool {
	return x >= b.X0 && x <= b.X1 && y >= b.Y0 && y <= b.Y1
}

// Translate returns the box moved by (dx, dy).
func (b Box) Translate(dx, dy float64) Box {
	return Box{b.X0 + dx, b.Y0 + dy, b.X1 + dx, b.Y1 + dy}
}

// String formats the box as "[x0,y0,x1,y1]".
func (b Box) String() string {
	return fmt.Sprintf("[%g,%g,%g,%g]", b.X0, b.Y0, b.X1, b.Y1)
}

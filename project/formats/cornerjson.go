package formats

// Corner/size JSON: one JSON object with three arrays,
//
//	images:      {id, file_name, width, height}
//	categories:  {id, name}
//	annotations: {id, image_id, category_id, bbox: [x, y, width, height],
//	              area, iscrowd}
//
// with bbox in continuous pixel coordinates, x,y the top-left corner. Fields
// this package does not use (info, licenses, segmentation, ...) are ignored.
// Its prediction-list variant is a JSON array of {image_id | file_name,
// category_id | category, bbox, score}.

import "boxwright/project"

// toBox converts a corner/size bbox [x, y, w, h] to a project.Box. Both use
// continuous pixel coordinates with (0,0) the top-left corner of the
// top-left pixel, so the conversion is x0 = x, y0 = y, x1 = x + w,
// y1 = y + h. Example: bbox [10, 20, 30, 40] is Box{10, 20, 40, 60}, whose
// area is 30*40 = 1200.
func toBox(x, y, w, h float64) project.Box {
	return project.Box{X0: x, Y0: y, X1: x + w, Y1: y + h}
}

// fromBox is the inverse of toBox: Box{10, 20, 40, 60} is bbox
// [10, 20, 30, 40] (w = 40-10, h = 60-20).
func fromBox(b project.Box) (x, y, w, h float64) {
	return b.X0, b.Y0, b.X1 - b.X0, b.Y1 - b.Y0
}

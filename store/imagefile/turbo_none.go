//go:build !cgo || noturbojpeg

package imagefile

import "image"

// TurboJPEG says whether JPEGs are decoded by libjpeg-turbo: not in this
// build (no cgo, or the build tag noturbojpeg), so Go's image/jpeg does.
const TurboJPEG = false

func turboScaled([]byte, int, int) (*image.RGBA, bool, error) { return nil, false, nil }

//go:build cgo && !noturbojpeg

package imagefile

// #cgo pkg-config: libturbojpeg
// #include <stdlib.h>
// #include <turbojpeg.h>
import "C"

import (
	"fmt"
	"image"
	"sync"
	"unsafe"
)

// TurboJPEG says whether JPEGs are decoded by libjpeg-turbo (Debian's
// libturbojpeg0, through cgo) rather than Go's image/jpeg: built with it
// unless the build tag noturbojpeg is given.
const TurboJPEG = true

var scalingFactors = sync.OnceValue(func() [][2]int {
	var n C.int
	sf := C.tjGetScalingFactors(&n)
	out := make([][2]int, 0, int(n))
	for _, f := range unsafe.Slice(sf, int(n)) {
		out = append(out, [2]int{int(f.num), int(f.denom)})
	}
	return out
})

// turboScaled decodes a JPEG at the smallest of libjpeg-turbo's scaling
// factors (n/8, computed in the DCT domain, so the full image is never
// made) whose size is at least minW×minH of the stored pixels; 0 asks for
// full size. ok is false for what libjpeg-turbo does not decode (CMYK
// JPEGs, for example): the caller uses Go's decoder.
func turboScaled(data []byte, minW, minH int) (img *image.RGBA, ok bool, err error) {
	if len(data) == 0 {
		return nil, false, nil
	}
	h := C.tjInitDecompress()
	if h == nil {
		return nil, false, nil
	}
	defer C.tjDestroy(h)
	buf := (*C.uchar)(unsafe.Pointer(&data[0]))
	var w, ht, sub, cs C.int
	if C.tjDecompressHeader3(h, buf, C.ulong(len(data)), &w, &ht, &sub, &cs) != 0 {
		return nil, false, nil // Go's decoder says what is wrong, in its words
	}
	if cs == C.TJCS_CMYK || cs == C.TJCS_YCCK {
		return nil, false, nil
	}
	sw, sh := int(w), int(ht)
	if minW > 0 || minH > 0 {
		best := 1 << 30
		for _, f := range scalingFactors() {
			if f[0] > f[1] {
				continue // enlarging
			}
			fw, fh := scaled(int(w), f), scaled(int(ht), f)
			if fw >= minW && fh >= minH && fw*fh < best {
				best, sw, sh = fw*fh, fw, fh
			}
		}
	}
	out := image.NewRGBA(image.Rect(0, 0, sw, sh))
	if C.tjDecompress2(h, buf, C.ulong(len(data)), (*C.uchar)(unsafe.Pointer(&out.Pix[0])), C.int(sw), C.int(out.Stride), C.int(sh),
		C.TJPF_RGBA, C.TJFLAG_STOPONWARNING) != 0 {
		return nil, true, fmt.Errorf("%s", C.GoString(C.tjGetErrorStr2(h)))
	}
	return out, true, nil
}

// scaled is TJSCALED: a side at the factor num/denom, rounded up.
func scaled(side int, f [2]int) int { return (side*f[0] + f[1] - 1) / f[1] }

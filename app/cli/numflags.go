package cli

import (
	"flag"
	"fmt"
	"math"
	"strconv"
)

// boundedFloat is a numeric flag that refuses, while the command line is
// parsed, anything that is not a finite number in its range: a value out
// of range must never reach a command that would store a result computed
// with it (an IoU of 2 or NaN pairs nothing and so erases a consensus).
type boundedFloat struct {
	v      *float64
	lo, hi float64
	loOpen bool // lo itself is refused
}

func (f *boundedFloat) String() string {
	if f == nil || f.v == nil {
		return ""
	}
	return strconv.FormatFloat(*f.v, 'g', -1, 64)
}

func (f *boundedFloat) Set(s string) error {
	x, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
		return fmt.Errorf("not a finite number: give %s", f.what())
	}
	if x < f.lo || (f.loOpen && x == f.lo) || x > f.hi {
		return fmt.Errorf("out of range: give %s", f.what())
	}
	*f.v = x
	return nil
}

func (f *boundedFloat) what() string {
	if f.loOpen {
		return fmt.Sprintf("a number above %g and at most %g", f.lo, f.hi)
	}
	return fmt.Sprintf("a number from %g to %g", f.lo, f.hi)
}

// floatIn defines a float flag whose given value must lie in [lo, hi].
func floatIn(fs *flag.FlagSet, name string, def, lo, hi float64, usage string) *float64 {
	v := def
	fs.Var(&boundedFloat{v: &v, lo: lo, hi: hi}, name, usage)
	return &v
}

// floatAbove defines a float flag whose given value must lie in (lo, hi].
func floatAbove(fs *flag.FlagSet, name string, def, lo, hi float64, usage string) *float64 {
	v := def
	fs.Var(&boundedFloat{v: &v, lo: lo, hi: hi, loOpen: true}, name, usage)
	return &v
}

// boundedInt is an integer flag that refuses, while parsing, values
// outside [lo, hi].
type boundedInt struct {
	v      *int
	lo, hi int
}

func (f *boundedInt) String() string {
	if f == nil || f.v == nil {
		return ""
	}
	return strconv.Itoa(*f.v)
}

func (f *boundedInt) Set(s string) error {
	x, err := strconv.Atoi(s)
	if err != nil || x < f.lo || x > f.hi {
		return fmt.Errorf("give a whole number from %d to %d", f.lo, f.hi)
	}
	*f.v = x
	return nil
}

// intIn defines an integer flag whose given value must lie in [lo, hi];
// the default may lie outside (0 often means "choose for me").
func intIn(fs *flag.FlagSet, name string, def, lo, hi int, usage string) *int {
	v := def
	fs.Var(&boundedInt{v: &v, lo: lo, hi: hi}, name, usage)
	return &v
}

// nmsFlag is the IoU threshold of non-maximum suppression: "off", or a
// number above 0 and at most 1 (a box is dropped when it overlaps a
// better-scoring one of its class by more than that). 0 is refused: as a
// threshold it would drop every box that touches another, which is not
// what anyone typing 0 means, and a tiny positive value does exactly that.
type nmsFlag struct{ v *float64 }

func (f *nmsFlag) String() string {
	if f == nil || f.v == nil {
		return ""
	}
	if *f.v == 0 {
		return "off"
	}
	return strconv.FormatFloat(*f.v, 'g', -1, 64)
}

func (f *nmsFlag) Set(s string) error {
	if s == "off" {
		*f.v = 0
		return nil
	}
	x, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(x) || x <= 0 || x > 1 {
		return fmt.Errorf("give off, or an IoU above 0 and at most 1 (boxes overlapping a better one of their class by more are dropped)")
	}
	*f.v = x
	return nil
}

// nmsIn defines the suppression flag with its default (0: off).
func nmsIn(fs *flag.FlagSet, def float64) *float64 {
	v := def
	fs.Var(&nmsFlag{v: &v}, "nms", "")
	return &v
}

// seedFlag is the seed of a pseudo-random generator: any whole number of
// its type (signed: int64, or unsigned: uint64), refused by name when it
// is not one (the flag package says only "parse error").
type seedFlag struct {
	signed *int64
	plain  *uint64
}

func (f *seedFlag) String() string {
	switch {
	case f == nil:
		return ""
	case f.signed != nil:
		return strconv.FormatInt(*f.signed, 10)
	case f.plain != nil:
		return strconv.FormatUint(*f.plain, 10)
	}
	return ""
}

func (f *seedFlag) Set(s string) error {
	if f.signed != nil {
		x, err := strconv.ParseInt(s, 10, 64)
		if err != nil {
			return fmt.Errorf("give a whole number from %d to %d", int64(math.MinInt64), int64(math.MaxInt64))
		}
		*f.signed = x
		return nil
	}
	x, err := strconv.ParseUint(s, 10, 64)
	if err != nil {
		return fmt.Errorf("give a whole number from 0 to %d", uint64(math.MaxUint64))
	}
	*f.plain = x
	return nil
}

// seedIn defines a signed seed flag with its default.
func seedIn(fs *flag.FlagSet, name string, def int64, usage string) *int64 {
	v := def
	fs.Var(&seedFlag{signed: &v}, name, usage)
	return &v
}

// unsignedSeedIn defines an unsigned seed flag with its default.
func unsignedSeedIn(fs *flag.FlagSet, name string, def uint64, usage string) *uint64 {
	v := def
	fs.Var(&seedFlag{plain: &v}, name, usage)
	return &v
}

//go:build amd64 && !purego

package nn

import (
	"os"

	"golang.org/x/sys/cpu"
)

// haveAsm32 reports whether the CPU can run kern6x16.
var haveAsm32 = cpu.X86.HasAVX2 && cpu.X86.HasFMA

// useAsm32 selects the assembly float32 path; BOXWRIGHT_GEMM=purego turns
// it off to compare against, or debug, the pure-Go kernel.
var useAsm32 = haveAsm32 && os.Getenv("BOXWRIGHT_GEMM") != "purego"

// kern6x16 adds alpha times the product of a packed 6×kc strip of A and a
// packed kc×16 strip of B to the 6×16 tile of C at c (row stride ldc).
// kc must be at least 1 and all 6×16 elements of C must exist.
//
//go:noescape
func kern6x16(kc int, a, b, c *float32, ldc int, alpha float32)

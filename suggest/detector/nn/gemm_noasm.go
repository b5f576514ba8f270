//go:build !amd64 || purego

package nn

// Without the assembly kernel the float32 path is the generic one.
var haveAsm32, useAsm32 = false, false

func kern6x16(kc int, a, b, c *float32, ldc int, alpha float32) {
	panic("nn: kern6x16 without assembly")
}

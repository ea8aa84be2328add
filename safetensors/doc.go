// Package safetensors reads and writes the safetensors container format and
// converts float32 to and from IEEE 754 binary16 (float16).
//
// A safetensors file is an 8-byte little-endian header length N, N bytes of
// JSON that map each tensor name to {"dtype", "shape", "data_offsets":
// [begin, end)} (byte offsets into the data section that follows the
// header) plus an optional "__metadata__" map of strings to strings, then
// the data: each tensor's values little-endian and row-major. This package
// reads and writes F32 and F16 tensors; in memory every value is a float32.
//
// # Conventions
//
//   - Functions that return tensors and metadata return them in that order,
//     ([]Tensor, map[string]string, error), and functions that take them
//     take them in that order.
//   - Shapes list the dimensions outermost first; a scalar has an empty
//     shape; a shape with a 0 anywhere holds no values.
//   - F16 conversion rounds to nearest with ties to even; every binary16
//     value widens exactly.
//
// # Hostile files
//
// Parse refuses, with an error naming the tensor or field, a file that is
// truncated, whose header runs past the file or beyond MaxHeaderSize, whose
// header is not one JSON object, repeats a key or lists more than
// MaxTensors tensors, whose dtypes are not F32 or F16, whose ranks exceed
// MaxDims, whose shapes disagree with their byte spans, or whose tensors do
// not tile the data section exactly (no gaps, no overlaps, nothing after
// the last). Sizes are checked by arithmetic before anything is allocated,
// so a reader allocates a small multiple of the file's size whatever the
// header claims. ReadFile refuses a file above MaxFileSize before reading
// it.
//
// Writes are atomic (WriteFile: a temporary file in the same folder,
// synced, then renamed over the target). Errors start with "safetensors: ".
// Nothing in this package panics on data.
package safetensors

// Package model describes the disparity network, stores its weights and
// runs it without a training graph.
//
// # The network
//
// A compact encoder-decoder with skip connections. From the left image
// alone it predicts two disparity maps, one for each view, at four scales.
// Every convolution is 3×3 with reflect padding of 1 and is followed by an
// ELU, except the heads, which end in a sigmoid scaled by DMax. There is no
// normalisation layer. With the default Config (input 256×128, encoder
// widths 16 32 64 96 128, decoder widths 16 16 32 64 96) the network has
// 929,352 parameters.
//
//	image 3×H×W ───────────────────────────────────────────────┐ (skip)
//	 enc1a s2, enc1b          E1×H/2  ──────────────────────┐    │
//	 enc2a s2, enc2b          E2×H/4  ─────────────────┐    │    │
//	 enc3a s2, enc3b          E3×H/8  ────────────┐    │    │    │
//	 enc4a s2, enc4b          E4×H/16 ───────┐    │    │    │    │
//	 enc5a s2, enc5b          E5×H/32        │    │    │    │    │
//	 dec4: reduce, ×2 nearest, cat(skip) ◄───┘    │    │    │    │
//	       conv               D4×H/16             │    │    │    │
//	 dec3: reduce, ×2, cat(skip) ◄────────────────┘    │    │    │
//	       conv → head3 → disp3 2×H/8                  │    │    │
//	 dec2: reduce, ×2, cat(skip, disp3 ×2 bilinear) ◄──┘    │    │
//	       conv → head2 → disp2 2×H/4                       │    │
//	 dec1: reduce, ×2, cat(skip, disp2 ×2) ◄────────────────┘    │
//	       conv → head1 → disp1 2×H/2                            │
//	 dec0: reduce, ×2, cat(image, disp1 ×2) ◄────────────────────┘
//	       conv → head0 → disp0 2×H
//
// "reduce" is a stride-1 convolution at the coarser resolution that sets
// the decoder width before the nearest-neighbour upsampling; "cat" joins
// the upsampled features first, then the inputs listed, in that order.
// "×2 bilinear" (here and in the stereo network) is PyTorch's
// F.interpolate(scale_factor=2, mode="bilinear", align_corners=False):
// output pixel o reads the input at (o + ½)/2 − ½, clamped to the first
// and last pixel. It is not the align_corners=True convention of the
// package warp's sampling positions (DEVELOPERS.md, Conventions).
//
// The network exists once, as data: Build returns an Arch whose Layers list
// every step in evaluation order with its operation, input tensor names,
// output shape and settings. The graph-free forward pass in this package
// and the training graph in model/train both walk that list, so they cannot
// disagree. Tensor names: "image" is the input; "encLa", "encLb" (L = 1 … 5),
// "decL.reduce", "decL.up", "decL.cat", "decL" (L = 4 … 0), "headS" and
// "dispS" (S = 3 … 0), and "dispS.up" (S = 3 … 1) are layer outputs.
//
// # Conventions
//
//   - Tensors are NCHW float32, contiguous (see package planar); an Arch
//     gives shapes for one image (C, H, W).
//   - The input is the left image, RGB in [0, 1], Config.Height × Config.Width,
//     multiples of 32, at least 64.
//   - Output dispS (S = 0 … 3) has shape 2 × H/2^S × W/2^S: channel 0 is the
//     left view's disparity d_L, channel 1 the right view's d_R, both
//     positive fractions of the width in (0, DMax), with the signs of
//     package warp (d_L maps left column x to right column x − d_L·W).
//   - Convolution weights are OIHW (out channels, in channels, kernel rows,
//     kernel columns) and named NAME.weight; biases have shape [out] and are
//     named NAME.bias, where NAME is the convolution layer's name.
//   - DMax, the largest disparity a head can output, comes from the rig and
//     the nearest depth of interest: d_max = f·B / Z_min / W (see DMax;
//     DMaxFromRig also subtracts the rig's DeltaCx).
//
// # Weights files
//
// Weights are stored as safetensors files (package safetensors), F32 or
// F16. The JSON key "__metadata__" holds string fields:
//
//	format          "parallax-weights"
//	format_version  "1" (FormatVersion; other versions are rejected)
//	arch            "parallax-ed" (ArchName)
//	arch_version    "1" (ArchVersion)
//	config          the Config as JSON: {"arch", "version", "width",
//	                "height", "encoder", "decoder", "d_max"}
//	input_width, input_height, d_max
//	                repeat the config for readers that do not parse it;
//	                they must agree with it
//	provenance.KEY  free text about how the weights were made
//
// A program that stores more than weights in one file (a training
// checkpoint adds solver tensors and metadata keys) writes Weights.Tensors
// and its own tensors with package safetensors and reads the weights back
// with WeightsFromTensors.
//
// Loading parses the file once and rejects, with an error naming the
// tensor or field, what package safetensors refuses (truncation, hostile
// headers, overlaps, gaps, dtypes other than F32 and F16), an unknown
// format or architecture version, a config out of range (an input larger
// than MaxNetPixels, checked before anything is allocated for it), and
// tensors that are missing, unexpected or of the wrong shape for the
// architecture in the config. Save writes atomically: a temporary file in
// the same directory, synced, then renamed over the target.
//
// # Inference
//
// NewNet prepares a graph-free forward pass for a fixed batch size: one
// buffer per tensor and one convolution plan per layer of package
// model/internal/cpu. Net.Forward walks the layer list and does not
// allocate after its first call; the outputs it returns share the Net's
// buffers. This package does not import gorgonia.
//
// Errors start with "model: ". Nothing in this package panics on data.
package model

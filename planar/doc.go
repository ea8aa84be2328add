// Package planar holds the float32 image batch that the warp, loss and model
// packages exchange, and its conversion from and to image.Image.
//
// Conventions, shared by the whole module:
//
//   - Layout is NCHW, contiguous: element (n, c, y, x) of an Image with shape
//     (N, C, H, W) is Pix[((n*C+c)*H+y)*W+x]. Single-channel maps (disparity,
//     validity masks, confidence) are Images with C = 1.
//   - Colour images hold gamma-encoded sRGB values as stored in the file
//     (not linearised), scaled to [0, 1] (8-bit value / 255, 16-bit value /
//     65535), channels R, G, B. Alpha is not kept: FromImage and
//     FromImageInto divide premultiplied colours by it.
//   - Errors start with "planar: ". New panics on an invalid shape (a
//     programmer's misuse; NewChecked returns an error instead), and Index,
//     At, Set, Item and ToNRGBA panic on indices outside the shape, like a
//     slice.
//   - Disparity is positive and expressed as a fraction of the image width;
//     see package warp for its sign.
//   - Masks hold 1 for a valid pixel and 0 for an invalid one.
//   - Size limits for data from outside are the module's one set: MaxSide
//     and MaxPixels bound an image or map (CheckSize), MaxValues bounds
//     N·C·H·W of an Image. Packages that read files or images refer to
//     them rather than defining their own.
package planar

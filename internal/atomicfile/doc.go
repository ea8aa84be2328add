// Package atomicfile writes user files so that a reader never sees one half
// written.
//
// Write sends the data to a temporary file in the same directory as the
// destination (named "." + base + ".tmp" + random digits), flushes it, syncs
// it to disk, gives it mode 0644, renames it over the destination and then
// syncs the directory where the platform allows. On any failure the
// temporary file is removed and the destination is left as it was.
//
// Errors are prefixed with the caller's package name, as every package of
// the module does (prefix "depth" gives "depth: writing PATH: ..."); an
// error returned by the caller's write function is passed through unchanged,
// so it keeps its own prefix.
package atomicfile

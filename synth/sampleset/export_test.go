package sampleset

// FileSystem, File and Disk let the fault tests outside the package
// replace how files are created.
type (
	FileSystem = fileSystem
	File       = file
)

// Disk is the file system builds write through.
var Disk = &disk

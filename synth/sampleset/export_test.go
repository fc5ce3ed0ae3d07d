package sampleset

// Create lets the fault tests outside the package replace how files are
// created.
var Create = &create

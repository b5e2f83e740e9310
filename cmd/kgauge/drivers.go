//go:build !kgauge_nos3

package main

// Object storage inputs: the library (package kgauge) reads local files and lake tables; the
// binary links the S3 driver for s3:// URLs (and gs://, azblob:// when built with the kgauge_gcs
// and kgauge_azblob tags). -tags kgauge_nos3 leaves it out; DEVELOPERS.md records what it costs.
import _ "github.com/kgauge/kgauge/stream/objstore/s3"

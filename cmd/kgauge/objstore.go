package main

// stream/objstore handles object URLs in Discover and Open (it sets stream.Remote); which schemes
// work depends on the drivers linked (drivers.go and the build tags).
import _ "github.com/kgauge/kgauge/stream/objstore"

package objstore_test

import _ "github.com/kgauge/kgauge/stream/objstore/s3" // the tests read s3:// from a local server

package beam

import _ "github.com/kgauge/kgauge/stream/objstore/s3" // TestS3 reads and writes s3:// on a local server

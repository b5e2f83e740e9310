// Package objstore reads lake files from object storage (s3://, and gs:// and azblob:// when their
// drivers are linked) through gocloud.dev/blob, for package stream: it lists and globs prefixes
// ("**" and hive key=value folders included) and opens objects as ranged readers with read-ahead
// sized for network latency, so that reading a Parquet file costs its footer and the projected
// column chunks, not the whole object.
//
// Importing the package sets stream.Remote. Bucket settings go in the URL's query, as gocloud.dev
// defines them per driver (for S3: region, endpoint, use_path_style, …) or in each cloud's
// environment; credentials come only from each cloud's standard chain (environment, shared
// configuration files, workload identity), never from flags or URLs.
//
// Drivers: s3blob is always linked. gcsblob and azureblob pull in large SDKs and are linked with
// the build tags kgauge_gcs and kgauge_azblob (cmd/kgauge-beam links both).
package objstore

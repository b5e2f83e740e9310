package beam

import (
	"os"
	"testing"

	"github.com/apache/beam/sdks/v2/go/pkg/beam/testing/ptest"
)

// anyInterfaceEnv lets the prism tests run outside a loopback-only network namespace, with prism's
// job server listening on every interface of the machine.
const anyInterfaceEnv = "KGAUGE_BEAM_ANY_INTERFACE"

var (
	isolated       bool  // the tests run in a network namespace with only the loopback interface
	isolationError error // why they do not
)

func TestMain(m *testing.M) {
	if code, done := isolate(); done {
		os.Exit(code)
	}
	ptest.Main(m)
}

// needPrism skips a test that starts prism unless it can listen on the loopback only.
func needPrism(t testing.TB) {
	t.Helper()
	if !isolated && os.Getenv(anyInterfaceEnv) != "1" {
		t.Skipf("prism listens on every interface and no loopback-only network namespace could be made (%v); set %s=1 to run it anyway", isolationError, anyInterfaceEnv)
	}
}

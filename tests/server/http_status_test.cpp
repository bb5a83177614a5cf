// The HTTP status of every error the service raises (docs/api.md, the status table).
#include <catch2/catch.hpp>

#include "server/http_service.hpp"

using tb::status_for;

TEST_CASE("error ids map to the documented HTTP statuses", "[http_status]") {
  // The request's fault.
  CHECK(status_for("request.out_of_range") == 400);
  CHECK(status_for("marking.ambiguous") == 400);
  CHECK(status_for("file.bad_sweep") == 400);
  CHECK(status_for("sweep.not_found") == 404);
  CHECK(status_for("store.conflict") == 409);
  CHECK(status_for("task.cancelled") == 409);
  CHECK(status_for("task.no_answer") == 408);
  CHECK(status_for("request.too_large") == 413);
  CHECK(status_for("engine.queue_full") == 429);
  // The signal at the jig: the technician's to fix there.
  CHECK(status_for("analysis.bridge_singular") == 422);
  CHECK(status_for("recording.clipped") == 422);
  CHECK(status_for("signal.near_nyquist") == 422);
  CHECK(status_for("calibration.no_signal") == 422);
  // The bench itself failed.
  CHECK(status_for("device.lost") == 503);
  CHECK(status_for("capture.xrun") == 503);
  CHECK(status_for("signal.lost") == 503);
  CHECK(status_for("signal.level_changed") == 503);
  // The service's own trouble.
  CHECK(status_for("store.unwritable") == 500);
  CHECK(status_for("internal") == 500);
}

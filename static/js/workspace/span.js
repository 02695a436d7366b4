/* The workspace's automatic span: the picture's percentile span widened so that every mark's
   apparent extremes lie inside it (the picture shows apparent temperatures), as the report
   and the survey page's thumbnails do (survey/services/processing.py automatic_span).
   Pure: no DOM, no state. */

export function spanCoveringMarks(span, marks) {
  var low = span[0], high = span[1];
  (marks || []).forEach(function (mark) {
    var stats = mark && mark.stats;
    if (!stats) { return; }
    [stats.min_c, stats.max_c].forEach(function (value) {
      if (typeof value === "number" && isFinite(value)) {
        low = Math.min(low, value);
        high = Math.max(high, value);
      }
    });
  });
  return [low, high];
}

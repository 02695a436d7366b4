// Pure parts of the batch page's live status: what the progress bar says and which
// thermograms changed since the last poll. No DOM here (tested with node --test).

export const BUSY = new Set(["queued", "processing"]);

/** The overall progress of a poll answer {thermograms, done, failed, total}. */
export function summarise(data) {
  const total = data.total || 0;
  const done = Math.min(data.done || 0, total);
  const failed = data.failed || 0;
  const finished = done >= total;
  let text = "";
  if (total) {
    text = finished ? `All ${total} processed` : `${done} of ${total} processed`;
    if (failed) text += ` (${failed} could not be read)`;
  }
  return { done, total, failed, finished, fraction: total ? done / total : 1, text };
}

/** Rows whose status, error or thumbnail differ from what the page last showed. */
export function changedRows(shown, rows) {
  return rows.filter((row) => {
    const before = shown.get(row.id);
    return (
      !before ||
      before.status !== row.status ||
      before.stalled !== row.stalled ||
      before.error !== row.error ||
      before.thumbnail !== row.thumbnail
    );
  });
}

/** The wait before the next poll: 1.5 times longer each time, at most 15 s. */
export function nextDelay(delay) {
  return Math.min(delay * 1.5, 15000);
}

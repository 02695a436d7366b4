/* Talking to the JSON API: session cookie, CSRF header, readable errors. */

export function csrfToken() {
  var match = document.cookie.match(/(?:^|;\s*)csrftoken=([^;]+)/);
  return match ? decodeURIComponent(match[1]) : "";
}

export function errorText(data, response) {
  if (data && data.error) {
    var fields = data.fields || {};
    var extra = Object.keys(fields).filter(function (k) { return data.error.indexOf(fields[k]) < 0; })
      .map(function (k) { return k + ": " + fields[k]; });
    return data.error + (extra.length ? " (" + extra.join("; ") + ")" : "");
  }
  return "The server answered " + response.status + ".";
}

export function api(method, url, body) {
  var options = { method: method, credentials: "same-origin", headers: { "Accept": "application/json" } };
  if (body !== undefined) {
    options.headers["Content-Type"] = "application/json";
    options.body = JSON.stringify(body);
  }
  if (method !== "GET") { options.headers["X-CSRFToken"] = csrfToken(); }
  return fetch(url, options).then(function (response) {
    if (response.status === 204) { return null; }
    return response.json().catch(function () { return null; }).then(function (data) {
      if (!response.ok) { throw new Error(errorText(data, response)); }
      return data;
    });
  });
}

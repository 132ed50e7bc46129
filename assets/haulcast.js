/* Haulcast's browser-side helpers (served locally from /assets). */
window.dash_clientside = Object.assign({}, window.dash_clientside, {
  haulcast: {
    /* Intake upload: refuse files over the size cap before they travel to the server, with a
       readable message; otherwise hand the contents on (with a time stamp, so that choosing
       the same file twice still triggers) and clear the upload widget. */
    checkUpload: function (contents, filename, maxBytes) {
      var nu = window.dash_clientside.no_update;
      if (!contents) { return [nu, nu, nu]; }
      var comma = contents.indexOf(",");
      var b64 = comma >= 0 ? contents.length - comma - 1 : contents.length;
      var bytes = Math.floor(b64 * 3 / 4);
      if (bytes > maxBytes) {
        var mb = function (n) { return (n / 1048576).toFixed(1) + " MB"; };
        var msg = "The file must be at most " + mb(maxBytes) + ". " + (filename || "This file") +
          " is " + mb(bytes) + ". Split it, or export only the columns you need.";
        return [nu, {"message": msg, "t": Date.now()}, null];
      }
      return [{"contents": contents, "filename": filename, "t": Date.now()}, nu, null];
    }
  }
});

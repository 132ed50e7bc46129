/* Forecast Board helpers that run in the browser (served locally from /assets). */
window.dash_clientside = Object.assign({}, window.dash_clientside, {
  haulcast_board: {
    /* On arrival at the board: the session's reference level into its input (no round trip). */
    restoreReference: function (_mount, data) {
      var r = data ? data.reference : null;
      return (typeof r === "number" && isFinite(r)) ? r : null;
    }
  }
});

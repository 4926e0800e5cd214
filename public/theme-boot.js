// Apply the saved Driftbench theme before the first paint, so a dark-theme user never sees a
// white flash. A plain file (not inline) so the server's Content-Security-Policy allows it.
(function () {
  try {
    var saved = localStorage.getItem('driftbench.theme');
    var dark = saved ? saved === 'dark' : window.matchMedia('(prefers-color-scheme: dark)').matches;
    if (dark) document.documentElement.classList.add('dark');
  } catch (e) {
    /* storage unavailable: light theme */
  }
})();

// skill-tides dashboard: follows the re-map and refit after a taxonomy decision by polling the
// progress JSON until both steps are done (or failed), updating the list in place (aria-live).
;(function () {
  'use strict'
  var box = document.getElementById('progress')
  if (!box || box.dataset.done !== '0' || !box.dataset.src) return
  var started = Date.now()
  var symbols = { done: '✓', failed: '✗', running: '…', waiting: '○' }

  function render(p) {
    p.steps.forEach(function (s) {
      var li = box.querySelector('li[data-step="' + s.step + '"]')
      if (!li) return
      var mark = li.querySelector('.step-status')
      mark.className = 'step-status step-' + s.status
      mark.textContent = symbols[s.status] + ' ' + s.status
    })
    box.dataset.done = p.done ? '1' : '0'
  }

  function poll() {
    fetch(box.dataset.src, { headers: { Accept: 'application/json' }, credentials: 'same-origin' })
      .then(function (r) { return r.ok ? r.json() : Promise.reject(new Error('HTTP ' + r.status)) })
      .then(function (p) {
        render(p)
        var failed = p.steps.some(function (s) { return s.status === 'failed' })
        if (!p.done && !failed && Date.now() - started < 10 * 60 * 1000) window.setTimeout(poll, 2500)
      })
      .catch(function () { window.setTimeout(poll, 10000) })
  }
  window.setTimeout(poll, 1500)
})()

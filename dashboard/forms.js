// skill-tides dashboard: small form helpers (progressive enhancement; every form works without this).
// A submitted form's buttons are disabled so a double click does not send the same change twice.
;(function () {
  'use strict'
  document.addEventListener('submit', function (event) {
    var form = event.target
    if (!(form instanceof HTMLFormElement) || form.method.toLowerCase() !== 'post') return
    window.setTimeout(function () {
      form.querySelectorAll('button[type="submit"]').forEach(function (b) {
        b.disabled = true
        b.setAttribute('aria-busy', 'true')
      })
    }, 0)
  })
})()

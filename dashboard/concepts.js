// skill-tides dashboard: suggestions for the "altLabel of" field. The page ships the first skills by
// label; as the reviewer types, matching skills are fetched from /api/concepts and offered instead.
// Options are built with the DOM (textContent/value), never from HTML strings.
;(function () {
  'use strict'
  var list = document.getElementById('concept-ids')
  if (!list) return
  var timer = null
  var last = null
  function fill(rows) {
    while (list.firstChild) list.removeChild(list.firstChild)
    rows.forEach(function (r) {
      var o = document.createElement('option')
      o.value = r.id
      o.textContent = r.label
      list.appendChild(o)
    })
  }
  document.addEventListener('input', function (event) {
    var input = event.target
    if (!(input instanceof HTMLInputElement) || !input.dataset.suggest) return
    var text = input.value.trim()
    if (text === last) return
    window.clearTimeout(timer)
    timer = window.setTimeout(function () {
      last = text
      fetch(input.dataset.suggest + '?limit=50&q=' + encodeURIComponent(text), { headers: { Accept: 'application/json' }, credentials: 'same-origin' })
        .then(function (r) { return r.ok ? r.json() : [] })
        .then(fill)
        .catch(function () {})
    }, 200)
  })
})()

// skill-tides dashboard: draws the charts with uPlot (served from the installed package) from the
// pages' JSON twins. Each chart box names its data with data-src; after drawing it records the
// number of plotted observations in data-drawn (used by the browser test). The same numbers are
// always in a table on the page, so nothing depends on this script.
;(function () {
  'use strict'
  var COLOURS = {
    external: '#1d4e89',
    internal: '#9a6200',
    fitted: '#22262a',
    forecast: '#6a3fa0',
    band80: 'rgba(106, 63, 160, 0.30)',
    band95: 'rgba(106, 63, 160, 0.13)',
    change: '#a23b3b',
  }

  function monthTs(m) {
    var p = /^(\d{4})-(\d{2})/.exec(m)
    return p ? Date.UTC(+p[1], +p[2] - 1, 1) / 1000 : null
  }
  function quarterTs(q) {
    var p = /^(\d{4})[-\s]?Q([1-4])$/i.exec(q)
    if (p) return Date.UTC(+p[1], (+p[2] - 1) * 3, 1) / 1000
    return monthTs(q)
  }
  function pct(u, values) {
    return values.map(function (v) { return v == null ? '' : (v * 100).toFixed(v < 0.01 ? 2 : 1) + '%' })
  }
  function count(values) {
    return values.filter(function (v) { return v != null }).length
  }
  function width(el) {
    return Math.max(320, Math.min(el.clientWidth || 760, 1100))
  }
  function fail(el, message) {
    el.textContent = message
    el.dataset.drawn = '0'
  }
  function getJson(url) {
    return fetch(url, { headers: { Accept: 'application/json' }, credentials: 'same-origin' }).then(function (r) {
      if (!r.ok) throw new Error('HTTP ' + r.status)
      return r.json()
    })
  }
  function resizeWith(el, plot) {
    window.addEventListener('resize', function () { plot.setSize({ width: width(el), height: plot.height }) })
  }
  // a vertical dashed mark with a word beside it (the change point)
  function markPlugin(ts, word) {
    return {
      hooks: {
        draw: [function (u) {
          if (ts == null) return
          var x = u.valToPos(ts, 'x', true)
          var ctx = u.ctx
          ctx.save()
          ctx.strokeStyle = COLOURS.change
          ctx.setLineDash([5, 4])
          ctx.lineWidth = 1.5 * devicePixelRatio
          ctx.beginPath()
          ctx.moveTo(x, u.bbox.top)
          ctx.lineTo(x, u.bbox.top + u.bbox.height)
          ctx.stroke()
          ctx.fillStyle = COLOURS.change
          ctx.font = 12 * devicePixelRatio + 'px sans-serif'
          ctx.fillText(word, x + 4 * devicePixelRatio, u.bbox.top + 14 * devicePixelRatio)
          ctx.restore()
        }],
      },
    }
  }

  function drawDemand(el, d) {
    if (!d.months || d.months.length === 0) return fail(el, 'No monthly data yet.')
    var x = d.months.map(monthTs)
    var forecast = d.forecast.slice(), lo80 = d.lo80.slice(), hi80 = d.hi80.slice(), lo95 = d.lo95.slice(), hi95 = d.hi95.slice()
    // join the forecast to the last fitted (or observed) month so the line and bands start there
    var first = forecast.findIndex(function (v) { return v != null })
    if (first > 0 && forecast[first - 1] == null) {
      var anchor = d.fitted[first - 1] != null ? d.fitted[first - 1] : d.external[first - 1]
      if (anchor != null) { forecast[first - 1] = lo80[first - 1] = hi80[first - 1] = lo95[first - 1] = hi95[first - 1] = anchor }
    }
    var hasInternal = count(d.internal) > 0
    var index = d.index || d.months.map(function () { return null })
    // the index only adds information when it differs from the postings share (more than one source)
    var indexDiffers = index.some(function (v, i) { return v != null && (d.external[i] == null || Math.abs(v - d.external[i]) > 1e-9 * Math.max(1, v)) })
    var dots = function (colour, filled) {
      return { show: true, size: 6, stroke: colour, fill: filled ? colour : '#fff', width: 1.5 }
    }
    var series = [
      {},
      { label: 'External share', stroke: COLOURS.external, paths: function () { return null }, points: dots(COLOURS.external, true), value: function (u, v) { return v == null ? '–' : (v * 100).toFixed(2) + '%' } },
      { label: 'Internal share', stroke: COLOURS.internal, scale: 'internal', show: hasInternal, paths: function () { return null }, points: dots(COLOURS.internal, false), value: function (u, v) { return v == null ? '–' : (v * 100).toFixed(2) + '%' } },
      { label: 'Demand index', stroke: COLOURS.fitted, show: indexDiffers, paths: function () { return null }, points: { show: true, size: 4, stroke: COLOURS.fitted, fill: COLOURS.fitted }, value: function (u, v) { return v == null ? '–' : (v * 100).toFixed(2) + '%' } },
      { label: 'Fitted', stroke: COLOURS.fitted, width: 2, points: { show: false } },
      { label: 'Forecast', stroke: COLOURS.forecast, width: 2, dash: [8, 5], points: { show: false } },
      { label: '80% high', stroke: 'transparent', points: { show: false } },
      { label: '80% low', stroke: 'transparent', points: { show: false } },
      { label: '95% high', stroke: 'transparent', points: { show: false } },
      { label: '95% low', stroke: 'transparent', points: { show: false } },
    ]
    var opts = {
      width: width(el),
      height: 320,
      scales: { x: { time: true }, y: { range: function (u, min, max) { return [0, max > 0 ? max * 1.1 : 0.01] } }, internal: { range: function (u, min, max) { return [0, max > 0 ? max * 1.1 : 0.01] } } },
      series: series,
      bands: [
        { series: [8, 9], fill: COLOURS.band95 },
        { series: [6, 7], fill: COLOURS.band80 },
      ],
      axes: [
        {},
        { scale: 'y', values: pct, size: 60, label: 'share of postings' },
        hasInternal ? { scale: 'internal', side: 1, values: pct, size: 60, grid: { show: false }, label: 'share of requests' } : { scale: 'internal', show: false },
      ],
      plugins: [markPlugin(d.changeMonth ? monthTs(d.changeMonth) : null, 'change')],
    }
    var plot = new uPlot(opts, [x, d.external, d.internal, index, d.fitted, forecast, hi80, lo80, hi95, lo95], el)
    el.dataset.drawn = String(count(d.external) + count(d.internal))
    resizeWith(el, plot)
  }

  function drawOneSkill(el, s, level) {
    var stamps = s.periods.map(quarterTs)
    var timed = stamps.every(function (t) { return t != null })
    var x = timed ? stamps : s.periods.map(function (_, i) { return i })
    var opts = {
      width: width(el),
      height: 280,
      scales: { x: { time: timed }, y: { range: function (u, min, max) { return [0, max > 0 ? max * 1.15 : 1] } } },
      series: [
        timed ? {} : { value: function (u, i) { return s.periods[i] || '' } },
        { label: s.label + ': people to reskill', stroke: COLOURS.forecast, width: 2, points: { show: true, size: 6, fill: COLOURS.forecast } },
        { label: level ? Math.round(level * 100) + '% high' : 'interval high', stroke: 'transparent', points: { show: false } },
        { label: level ? Math.round(level * 100) + '% low' : 'interval low', stroke: 'transparent', points: { show: false } },
      ],
      bands: [{ series: [2, 3], fill: COLOURS.band80 }],
      axes: [
        timed ? {} : { values: function (u, vals) { return vals.map(function (i) { return s.periods[i] || '' }) } },
        { label: 'people', size: 60 },
      ],
    }
    return new uPlot(opts, [x, s.reskill, s.high, s.low], el)
  }

  function drawQuarters(el, d) {
    if (!d.skills || d.skills.length === 0) return fail(el, 'No forecast yet.')
    var plot = null
    var show = function (i) {
      if (plot) plot.destroy()
      plot = drawOneSkill(el, d.skills[i], d.level)
      el.dataset.drawn = String(count(d.skills[i].reskill))
      el.dataset.skill = d.skills[i].id
    }
    if (d.skills.length > 1) {
      var label = document.createElement('label')
      label.className = 'chart-choice'
      label.textContent = 'Skill '
      var select = document.createElement('select')
      d.skills.forEach(function (s, i) {
        var o = document.createElement('option')
        o.value = String(i)
        o.textContent = s.label
        select.appendChild(o)
      })
      select.addEventListener('change', function () { show(+select.value) })
      label.appendChild(select)
      el.parentNode.insertBefore(label, el)
    }
    show(0)
    window.addEventListener('resize', function () { if (plot) plot.setSize({ width: width(el), height: plot.height }) })
  }

  function start(id, draw) {
    var el = document.getElementById(id)
    if (!el || !el.dataset.src) return
    if (typeof window.uPlot !== 'function') return fail(el, 'The chart library did not load; the numbers are in the table below.')
    getJson(el.dataset.src)
      .then(function (d) { draw(el, d) })
      .catch(function (e) { fail(el, 'The chart could not be drawn (' + e.message + '); the numbers are in the table below.') })
  }

  start('demand-chart', drawDemand)
  start('reskilling-chart', drawQuarters)
})()

// The report's views over the whole front (the Pareto plot, colours, objective pairs, parallel coordinates, the
// sortable table, the comparison) and the selection that drives them; one candidate's drawings are in
// static/report_draw.js (window.strainlineDraw), loaded first.
(function () {
'use strict';
var K = window.strainlineDraw;
var D = K.D, C = D.candidates;
var label = K.label, fmt = K.fmt, esc = K.esc, efmt = K.efmt, el = K.el, fill = K.fill, sheetHref = K.sheetHref;
var drawSection = K.drawSection, drawStrain = K.drawStrain, drawZones = K.drawZones, drawLayerTable = K.drawLayerTable;
var neutralAxes = K.neutralAxes, zText = K.zText;
var TO = D.true_objectives || D.objectives;
var state = {x: 'total_thickness_um', y: 'peak_strain_pct', colour: null, selected: 0, compare: []};
if (TO.indexOf('peak_strain_pct') < 0 && TO.length >= 2) {
  // peak strain is not optimised in this study: open on a pair of its own objectives
  var strainKey = TO.filter(function (k) { return /strain/.test(k); })[0];
  if (strainKey && TO.indexOf('total_thickness_um') >= 0) { state.y = strainKey; state.x = 'total_thickness_um'; }
  else { state.y = TO[0]; state.x = TO[1]; }
}
window.strainline = {data: D, state: state, select: select, compare: compare, renders: 0};
if (!C.length) {           // nothing feasible: the diagnosis panel, with each nearest candidate drawn to scale
  (D.nearest || []).forEach(function (n, k) {
    if (document.getElementById('near-section-' + k) && n.layers.length)
      drawSection({id: n.id, layers: n.layers, lines: [], refs: [], bend: {}, signal: null, signals: n.signals},
                  {target: 'near-section-' + k, small: true});
  });
  window.strainline.renders = 1;
  return;
}

// ----- colour quantities
var colourOpts = [];
D.objectives.forEach(function (k) { colourOpts.push({key: k, get: function (c) { return c.objectives[k]; }}); });
function addOpt(key, get) {
  if (C.length && C.every(function (c) { var v = get(c); return typeof v === 'number'; }) &&
      !colourOpts.some(function (o) { return o.key === key; })) colourOpts.push({key: key, get: get});
}
addOpt('cycles_to_failure', function (c) { return c.bend.cycles_to_failure; });
addOpt('width_um', function (c) { return c.line.width_um; });
addOpt('signal_strain_pct', function (c) { return c.objectives.signal_strain_pct; });
addOpt('yield_pct', function (c) { var ln = (c.lines || [])[0]; return ln && ln.yield ? ln.yield.yield_pct : null; });
var sel = document.getElementById('colour-by');
colourOpts.forEach(function (o) {
  var op = document.createElement('option'); op.value = o.key; op.textContent = label(o.key); sel.appendChild(op);
});
var pref = ['loss_db_per_m', 'cycles_to_failure', 'cycles', 'width_um'];
for (var i = 0; i < pref.length; i++) {
  if (colourOpts.some(function (o) { return o.key === pref[i]; })) { state.colour = pref[i]; break; }
}
if (!state.colour && colourOpts.length) state.colour = colourOpts[0].key;
sel.value = state.colour;
sel.addEventListener('change', function () { state.colour = sel.value; drawFront(); if (pcDrawn) drawParcoords(); });
var pcDrawn = false;
function colourValues() {
  var o = colourOpts.filter(function (o) { return o.key === state.colour; })[0];
  if (!o) return {vals: C.map(function () { return 0; }), title: '', log: false};
  var vals = C.map(o.get);
  var log = /cycles/.test(o.key) && vals.every(function (v) { return v > 0; });
  return {vals: log ? vals.map(function (v) { return Math.log10(v); }) : vals,
          title: log ? 'log10 ' + label(o.key) : label(o.key), log: log};
}

// ----- objective pairs
var pairs = [];
var obj = D.objectives;
for (var a = 0; a < obj.length; a++) for (var b = a + 1; b < obj.length; b++) pairs.push([obj[a], obj[b]]);
pairs = pairs.map(function (p) { return (/strain/.test(p[0]) && !/strain/.test(p[1])) || p[0] === 'peak_strain_pct' ? [p[1], p[0]] : p; });
var pb = document.getElementById('pair-buttons');
if (obj.length >= 3) {
  pb.appendChild(document.createTextNode('objectives: '));
  pairs.forEach(function (p) {
    var bt = document.createElement('button');
    bt.textContent = label(p[1]) + ' vs ' + label(p[0]);
    bt.className = 'pair';
    bt.addEventListener('click', function () { state.x = p[0]; state.y = p[1]; drawFront(); });
    bt.dataset.x = p[0]; bt.dataset.y = p[1];
    pb.appendChild(bt);
  });
}
function markPairs() {
  Array.prototype.forEach.call(pb.querySelectorAll('button'), function (bt) {
    bt.classList.toggle('on', bt.dataset.x === state.x && bt.dataset.y === state.y);
  });
  var off = [state.x, state.y].filter(function (k) { return TO.indexOf(k) < 0; });
  var nbad = C.filter(function (c) { return c.field_flag && c.field_flag.mismatch; }).length;
  document.getElementById('front-note').textContent = (D.dominated.length ?
    'Faint grey: dominated feasible points kept by the run. ' : '') + (nbad ?
    'Orange squares: the field-solver check disagrees with the closed form beyond the tolerance. ' : '') + (off.length ?
    label(off[0]) + ' is not an objective of this study, so some front points look dominated in this view.' : '');
}

function hoverText(c) {
  var o = c.objectives, l = c.line, bd = c.bend;
  var t = '<b>' + esc(c.id) + '</b>';
  Object.keys(o).forEach(function (k) { t += '<br>' + esc(label(k)) + ': ' + efmt(o[k]); });
  if (l.width_um !== undefined) t += '<br>width: ' + efmt(l.width_um) + ' um';
  if (l.gap_um !== null && l.gap_um !== undefined) t += ', gap ' + efmt(l.gap_um) + ' um';
  if (l.z0_ohm !== null && l.z0_ohm !== undefined && !l.z_diff_ohm) t += '<br>Z0: ' + efmt(l.z0_ohm) + ' ohm';
  if (l.z_diff_ohm) t += '<br>Zdiff: ' + efmt(l.z_diff_ohm) + ' ohm';
  if ((c.lines || []).length > 1) c.lines.forEach(function (ln) {
    t += '<br>' + esc(ln.name) + ': ' + esc(zText(ln)) + ' ' + efmt(ln.z_ohm) + ' ohm on ' + esc(ln.layer) +
      (ln.yield ? ', yield ' + efmt(ln.yield.yield_pct) + ' %' : '');
  });
  else if ((c.lines || [])[0] && c.lines[0].yield) t += '<br>impedance yield: ' + efmt(c.lines[0].yield.yield_pct) + ' %';
  if (bd.cycles_to_failure) t += '<br>cycles to failure: ' + efmt(bd.cycles_to_failure, 3);
  if (bd.radius_to_thickness) t += '<br>R / thickness: ' + efmt(bd.radius_to_thickness, 3);
  return t;
}

function drawFront() {
  markPairs();
  var cv = colourValues();
  var traces = [];
  if (D.dominated.length) {
    traces.push({type: 'scatter', mode: 'markers', name: 'dominated', hoverinfo: 'skip',
      x: D.dominated.map(function (d) { return d[state.x]; }), y: D.dominated.map(function (d) { return d[state.y]; }),
      marker: {size: 6, color: 'rgba(120,130,140,0.22)'}});
  }
  var order = C.map(function (c, i) { return i; }).sort(function (i, j) { return C[i].objectives[state.x] - C[j].objectives[state.x]; });
  if (D.objectives.length === 2) traces.push({type: 'scatter', mode: 'lines', name: 'front', hoverinfo: 'skip',
    x: order.map(function (i) { return C[i].objectives[state.x]; }), y: order.map(function (i) { return C[i].objectives[state.y]; }),
    line: {color: 'rgba(44,110,143,0.25)', width: 1, shape: 'hv'}});
  traces.push({type: 'scatter', mode: 'markers', name: 'candidates',
    x: C.map(function (c) { return c.objectives[state.x]; }), y: C.map(function (c) { return c.objectives[state.y]; }),
    text: C.map(hoverText), hovertemplate: '%{text}<extra></extra>', customdata: C.map(function (c, i) { return i; }),
    marker: {size: 11, color: cv.vals, colorscale: 'Viridis', showscale: true, line: {width: 1, color: '#223'},
             colorbar: {title: {text: esc(cv.title), side: 'right'}, thickness: 14}}});
  var bad = C.map(function (c, i) { return i; }).filter(function (i) { return C[i].field_flag && C[i].field_flag.mismatch; });
  if (bad.length) traces.push({type: 'scatter', mode: 'markers', name: 'field mismatch', hoverinfo: 'skip',
    x: bad.map(function (i) { return C[i].objectives[state.x]; }), y: bad.map(function (i) { return C[i].objectives[state.y]; }),
    marker: {size: 17, symbol: 'square-open', color: '#D55E00', line: {width: 2.5, color: '#D55E00'}}});
  var s = C[state.selected];
  if (s) traces.push({type: 'scatter', mode: 'markers', name: 'selected', hoverinfo: 'skip',
    x: [s.objectives[state.x]], y: [s.objectives[state.y]],
    marker: {size: 20, color: 'rgba(0,0,0,0)', line: {width: 2.5, color: '#d1343b'}}});
  Plotly.react('front', traces, {
    margin: {l: 64, r: 10, t: 10, b: 48}, showlegend: false, hovermode: 'closest',
    xaxis: {title: {text: esc(label(state.x))}, zeroline: false}, yaxis: {title: {text: esc(label(state.y))}, zeroline: false},
    plot_bgcolor: '#fbfcfd'}, {displaylogo: false, responsive: true});
}

function drawParcoords() {
  var cv = colourValues();
  // plotly draws parcoords on a canvas as wide as the window: fit the axes into the card, and shorten long
  // category names in the middle so neighbouring axes' names do not run into each other
  var avail = document.getElementById('parcoords').clientWidth - 200;
  var maxChars = Math.max(8, Math.min(22, Math.floor((avail / Math.max(1, D.decisions.length - 1) - 14) / 6.2)));
  var dims = D.decisions.map(function (d) {
    if (!d.categorical) return {label: esc(d.label), values: d.values};
    var cats = Array.from(new Set(d.values)).sort();
    var short = function (t) {
      t = String(t);
      var h = Math.floor((maxChars - 1) / 2);
      return t.length > maxChars ? t.slice(0, h) + '\u2026' + t.slice(t.length - (maxChars - 1 - h)) : t;
    };
    return {label: esc(d.label), values: d.values.map(function (v) { return cats.indexOf(v); }),
            tickvals: cats.map(function (v, i) { return i; }), ticktext: cats.map(function (t) { return esc(short(t)); }),
            range: [-0.5, Math.max(cats.length - 0.5, 0.5)]};
  });
  if (!dims.length) return;
  // room for the first axis's tick labels on the left and the labels on top, so nothing is clipped
  // and columns far enough apart that the category names of neighbouring axes do not run into each other
  var widest = function (list) { return list.reduce(function (m, t) { return Math.max(m, String(t).length); }, 0); };
  var left = Math.min(260, Math.max(70, 6.2 * widest(dims[0].ticktext || []) + 16));
  var right = Math.min(260, Math.max(110, 6.2 * widest(dims[dims.length - 1].ticktext || []) + 16));
  var top = Math.min(200, Math.max(90, 4.5 * widest(dims.map(function (d) { return d.label; })) + 30));
  var box = document.getElementById('parcoords');
  box.style.height = Math.max(430, 330 + top) + 'px';
  Plotly.react('parcoords', [{type: 'parcoords', dimensions: dims, labelangle: -30, labelside: 'top',
    labelfont: {size: 11}, tickfont: {size: 10},
    line: {color: cv.vals, colorscale: 'Viridis', showscale: true, colorbar: {title: {text: esc(cv.title)}, x: 1.0, xpad: 40}}}],
    {margin: {l: left, r: right, t: top, b: 30}}, {displaylogo: false, responsive: true});
}

// ----- candidate table (sortable)
var tcols = [{k: 'id', t: 'candidate', get: function (c) { return c.id; }, s: true}];
D.objectives.forEach(function (k) { tcols.push({k: k, t: label(k), get: function (c) { return c.objectives[k]; }}); });
function col(k, t, get) { if (C.some(function (c) { var v = get(c); return v !== null && v !== undefined; })) tcols.push({k: k, t: t, get: get}); }
col('layer', 'signal layer', function (c) { return c.line.layer_name || c.line.layer; });
col('width_um', 'width (um)', function (c) { return c.line.width_um; });
col('gap_um', 'gap (um)', function (c) { return c.line.gap_um; });
col('z0_ohm', 'Z0 (ohm)', function (c) { return c.line.z0_ohm; });
col('z_diff_ohm', 'Zdiff (ohm)', function (c) { return c.line.z_diff_ohm; });
col('eps_eff', 'eps eff', function (c) { return c.line.eps_eff; });
col('field_error_pct', 'impedance vs field check (%)', function (c) {
  return c.line.field_check ? c.line.field_check.closed_form_error_pct : null; });
col('cycles_to_failure', 'cycles to failure', function (c) { return c.bend.cycles_to_failure; });
col('radius_to_thickness', 'R / thickness', function (c) { return c.bend.radius_to_thickness; });
col('neutral_axis_um', 'neutral axis (um)', function (c) { return c.bend.neutral_axis_um; });
col('field_flag', 'field check', function (c) {
  return c.field_flag ? (c.field_flag.mismatch ? 'MISMATCH ' : 'ok ') + (c.field_flag.text || '') : null; });
function lineAt(c, k) { return (c.lines || [])[k] || null; }
var nLines = Math.max.apply(null, C.map(function (c) { return (c.lines || []).length; }).concat([0]));
for (var lk = 0; lk < nLines; lk++) (function (k) {
  var nm = C.map(function (c) { return lineAt(c, k); }).filter(Boolean)[0].name, pre = nLines > 1 ? nm + ': ' : '';
  if (nLines > 1) {
    col('line' + k + '.layer', pre + 'layer', function (c) { var ln = lineAt(c, k); return ln ? ln.layer : null; });
    col('line' + k + '.width_um', pre + 'width (um)', function (c) { var ln = lineAt(c, k); return ln ? ln.width_um : null; });
    col('line' + k + '.z_ohm', pre + 'impedance (ohm)', function (c) { var ln = lineAt(c, k); return ln ? ln.z_ohm : null; });
    col('line' + k + '.insertion_loss_db', pre + 'insertion loss (dB)', function (c) {
      var ln = lineAt(c, k); return ln ? ln.insertion_loss_db : null; });
  }
  col('line' + k + '.yield_pct', pre + 'impedance yield (%)', function (c) {
    var ln = lineAt(c, k); return ln && ln.yield ? ln.yield.yield_pct : null; });
  col('line' + k + '.dominant', pre + 'dominant tolerance', function (c) {
    var ln = lineAt(c, k); return ln && ln.yield ? ln.yield.dominant : null; });
})(lk);
col('findings', 'findings', function (c) { return c.findings.length; });
var sortState = {k: null, dir: 1};
function drawTable() {
  var idx = C.map(function (c, i) { return i; });
  if (sortState.k) {
    var cdef = tcols.filter(function (t) { return t.k === sortState.k; })[0];
    idx.sort(function (i, j) {
      var a = cdef.get(C[i]), b = cdef.get(C[j]);
      if (a === b) return 0;
      if (a === null || a === undefined) return 1;
      if (b === null || b === undefined) return -1;
      if (typeof a === 'number' && typeof b === 'number') return sortState.dir * (a - b);
      return sortState.dir * String(a).localeCompare(String(b), undefined, {numeric: true});
    });
  }
  var head = el('thead', null, el('tr', null, tcols.map(function (t) {
    var cls = (t.s ? 't ' : '') + (sortState.k === t.k ? (sortState.dir > 0 ? 'asc' : 'desc') : '');
    return el('th', {'data-k': t.k, 'class': cls}, t.t); }).concat([el('th', {'class': 't'}, 'sheet')])));
  var body = el('tbody', null, idx.map(function (i) {
    var c = C[i];
    var cls = (i === state.selected ? 'sel' : '') + (c.field_flag && c.field_flag.mismatch ? ' mismatch' : '');
    return el('tr', {'data-i': String(i), 'class': cls.trim()}, tcols.map(function (t) {
      var v = t.get(c);
      return el('td', {'class': t.s || typeof v !== 'number' ? 't' : '', 'data-v': v === undefined || v === null ? '' : String(v)},
        fmt(v));
    }).concat([el('td', {'class': 't'}, [el('a', {href: sheetHref(c)}, 'sheet'), ' ',
      el('label', {'class': 'cmp'}, [el('input', {type: 'checkbox', 'data-cmp': String(i)}), 'compare'])])]));
  }));
  var tb = fill('cand-table', [head, body]);
  Array.prototype.forEach.call(tb.querySelectorAll('thead th[data-k]'), function (th) {
    th.addEventListener('click', function () {
      var k = th.getAttribute('data-k');
      sortState.dir = sortState.k === k ? -sortState.dir : 1; sortState.k = k; drawTable();
    });
  });
  Array.prototype.forEach.call(tb.querySelectorAll('tbody tr'), function (tr) {
    tr.addEventListener('click', function (ev) {
      if (ev.target.tagName === 'A' || ev.target.tagName === 'INPUT' || ev.target.tagName === 'LABEL') return;
      select(Number(tr.getAttribute('data-i')));
    });
  });
}

function syncCompareBoxes() {
  Array.prototype.forEach.call(document.querySelectorAll('#cand-table input[data-cmp]'), function (cb) {
    cb.checked = state.compare.indexOf(Number(cb.getAttribute('data-cmp'))) >= 0;
    cb.onchange = function () {
      var i = Number(cb.getAttribute('data-cmp')), k = state.compare.indexOf(i);
      var next = state.compare.slice();
      if (cb.checked && k < 0) next.push(i);
      if (!cb.checked && k >= 0) next.splice(k, 1);
      if (next.length > 4) next.shift();
      compare(next);
    };
  });
}

function select(i) {
  if (!(i >= 0 && i < C.length)) return;
  state.selected = i;
  var c = C[i];
  drawSection(c); drawStrain(c); drawZones(c); drawLayerTable(c); drawFront(); drawTable(); syncCompareBoxes();
  window.strainline.renders += 1;
}

// ----- comparison: 2-4 candidates side by side, cross-sections and strain profiles on shared axes
var CMP_COLOURS = ['#0072B2', '#D55E00', '#009E73', '#CC79A7'];   // Okabe-Ito hues, one per compared candidate
function compare(list) {
  list = (list || []).filter(function (i, k, a) { return i >= 0 && i < C.length && a.indexOf(i) === k; }).slice(0, 4);
  state.compare = list;
  var card = document.getElementById('compare-card');
  syncCompareBoxes();
  if (list.length < 2) {
    fill('compare-note', 'Tick 2 to 4 candidates in the table below ("compare") to see them side by side.');
    Plotly.purge('compare-section'); Plotly.purge('compare-strain'); fill('compare-table', []);
    card.classList.add('empty');
    return;
  }
  card.classList.remove('empty');
  fill('compare-note', 'Heights to scale on a shared axis; each column is one candidate (not to scale across).');
  var top = Math.max.apply(null, list.map(function (i) { return C[i].layers.length ? C[i].layers[0].top_um : 0; }));
  var traces = [], shapes = [], anns = [];
  list.forEach(function (i, k) {
    var c = C[i];
    c.layers.forEach(function (l, j) {
      if (l.thickness_um <= 0) return;
      var col = l.kind === 'copper' ? (j === c.signal ? D.signalColour : D.colours.copper) : (D.colours[l.family] || D.colours.other);
      traces.push({type: 'scatter', mode: 'lines', x: [k - 0.38, k + 0.38, k + 0.38, k - 0.38, k - 0.38],
        y: [l.bottom_um, l.bottom_um, l.top_um, l.top_um, l.bottom_um], fill: 'toself', fillcolor: col,
        line: {color: '#555', width: 0.5, dash: l.kind === 'air-gap' ? 'dot' : 'solid'}, hoveron: 'fills',
        hoverinfo: 'text', name: esc(c.id), text: esc(c.id) + ': ' + esc(l.name) + ' (' + esc(l.material) + '), ' +
        efmt(l.thickness_um) + ' um'});
    });
    neutralAxes(c).forEach(function (y) {
      shapes.push({type: 'line', x0: k - 0.45, x1: k + 0.45, y0: y, y1: y, line: {color: '#111', width: 1.4, dash: 'dash'}});
    });
    anns.push({x: k, y: c.layers.length ? c.layers[0].top_um : 0, text: esc(c.id), showarrow: false, yanchor: 'bottom',
      font: {size: 12, color: CMP_COLOURS[k]}});
  });
  Plotly.react('compare-section', traces, {
    title: {text: 'Cross-sections (heights to scale, dashed: neutral axes)', font: {size: 13}},
    margin: {l: 56, r: 12, t: 34, b: 40}, showlegend: false, hovermode: 'closest', shapes: shapes, annotations: anns,
    xaxis: {tickvals: list.map(function (i, k) { return k; }), ticktext: list.map(function (i) { return esc(C[i].id); }),
            range: [-0.6, list.length - 0.4], zeroline: false, showgrid: false},
    yaxis: {title: {text: 'height from bottom face (um)'}, range: [-top * 0.04, top * 1.1], zeroline: false},
    plot_bgcolor: '#fff'}, {displaylogo: false, responsive: true});
  var st = [];
  list.forEach(function (i, k) {
    var c = C[i], first = true;
    c.layers.forEach(function (l) {
      if (l.thickness_um <= 0 || l.kind === 'air-gap' || typeof l.strain_top_pct !== 'number') return;
      st.push({type: 'scatter', mode: 'lines', x: [l.strain_bottom_pct, l.strain_top_pct], y: [l.bottom_um, l.top_um],
        line: {color: CMP_COLOURS[k], width: l.kind === 'copper' ? 4 : 1.6}, name: esc(c.id), legendgroup: c.id,
        showlegend: first, hoverinfo: 'text',
        text: [esc(c.id) + ' ' + esc(l.name) + ': ' + efmt(l.strain_bottom_pct) + ' %',
               esc(c.id) + ' ' + esc(l.name) + ': ' + efmt(l.strain_top_pct) + ' %']});
      first = false;
    });
  });
  Plotly.react('compare-strain', st, {
    title: {text: 'Strain through the thickness, same axes (thick: copper)', font: {size: 13}},
    margin: {l: 56, r: 12, t: 34, b: 40}, hovermode: 'closest', legend: {orientation: 'h', y: -0.18},
    xaxis: {title: {text: 'strain (%), tension positive'}, zeroline: true, zerolinecolor: '#bbb'},
    yaxis: {title: {text: 'height from bottom face (um)'}, range: [-top * 0.04, top * 1.1], zeroline: false},
    plot_bgcolor: '#fbfcfd'}, {displaylogo: false, responsive: true});
  var rowsDef = [['peak copper strain (%)', function (c) { return c.objectives.peak_strain_pct; }],
    ['total thickness (um)', function (c) { return c.objectives.total_thickness_um; }]];
  TO.forEach(function (k) {
    if (k !== 'peak_strain_pct' && k !== 'total_thickness_um') rowsDef.push([label(k), function (c) { return c.objectives[k]; }]);
  });
  rowsDef.push(['trace width (um)', function (c) { return c.line.width_um; }],
    ['cycles to failure', function (c) { return c.bend.cycles_to_failure; }],
    ['neutral axis (um)', function (c) { return c.bend.neutral_axis_um; }],
    ['field check', function (c) { return c.field_flag ? c.field_flag.text : null; }]);
  (C[list[0]].lines || []).forEach(function (ln0, k) {
    var pre = (C[list[0]].lines.length > 1 ? ln0.name + ': ' : '');
    rowsDef.push([pre + 'impedance (ohm)', function (c) { var ln = lineAt(c, k); return ln ? ln.z_ohm : null; }]);
    if (list.some(function (i) { var ln = lineAt(C[i], k); return ln && ln.yield; }))
      rowsDef.push([pre + 'impedance yield (%)', function (c) { var ln = lineAt(c, k); return ln && ln.yield ? ln.yield.yield_pct : null; }]);
  });
  fill('compare-table', [el('thead', null, el('tr', null, [el('th', {'class': 't'}, '')].concat(list.map(function (i, k) {
    return el('th', {style: 'color:' + CMP_COLOURS[k]}, C[i].id); })))),
    el('tbody', null, rowsDef.map(function (r) {
      return el('tr', null, [el('th', {'class': 't'}, r[0])].concat(list.map(function (i) { return el('td', null, fmt(r[1](C[i]))); })));
    }))]);
  window.strainline.renders += 1;
}

// the parallel-coordinates view (WebGL) is drawn when it comes near the screen, so the page is usable at once
(function () {
  var box = document.getElementById('parcoords');
  function go() { if (!pcDrawn) { pcDrawn = true; drawParcoords(); } }
  if (!('IntersectionObserver' in window)) { go(); return; }
  var io = new IntersectionObserver(function (entries) {
    if (entries.some(function (e) { return e.isIntersecting; })) { io.disconnect(); go(); }
  }, {rootMargin: '300px'});
  io.observe(box);
})();
if (C.length) {
  var best = 0;
  C.forEach(function (c, i) { if (c.objectives.peak_strain_pct < C[best].objectives.peak_strain_pct) best = i; });
  select(best);
  // open the comparison on the candidates at the ends of the front (least strain, thinnest) when they differ
  var ends = [best];
  TO.concat(['total_thickness_um']).forEach(function (k) {
    var m = 0;
    C.forEach(function (c, i) { if (c.objectives[k] < C[m].objectives[k]) m = i; });
    if (ends.indexOf(m) < 0 && ends.length < 3) ends.push(m);
  });
  compare(ends.length > 1 ? ends : []);
}
document.getElementById('front').on('plotly_click', function (ev) {
  var p = ev.points.filter(function (p) { return p.data.name === 'candidates'; })[0];
  if (p) select(p.customdata);
});
})();

(function () {
'use strict';
var D = JSON.parse(document.getElementById('strainline-data').textContent);
var C = D.candidates;
var LABELS = {peak_strain_pct: 'peak copper strain (%)', total_thickness_um: 'total thickness (um)',
  signal_strain_pct: 'signal copper strain (%)', loss_db_per_m: 'loss (dB/m)', cycles: 'cycles',
  cycles_to_failure: 'cycles to failure', width_um: 'trace width (um)'};
function label(k) { return LABELS[k] || k.replace(/_/g, ' '); }
function fmt(v, d) {
  if (v === null || v === undefined) return '-';
  if (Array.isArray(v)) return v.map(function (x) { return fmt(x, d); }).join(' / ');
  if (typeof v !== 'number') return String(v);
  d = d || 4;
  var a = Math.abs(v);
  if (v !== 0 && (a >= 1e6 || a < 1e-3)) return v.toExponential(d - 1);
  return String(Number(v.toPrecision(d)));
}
function esc(s) { return String(s).replace(/[&<>"]/g, function (c) {
  return {'&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;'}[c]; }); }
// DOM from data: text always goes in as text nodes, attributes through setAttribute (never HTML strings)
function el(tag, attrs, children) {
  var node = document.createElement(tag);
  if (attrs) Object.keys(attrs).forEach(function (k) { if (attrs[k] !== '' && attrs[k] !== null) node.setAttribute(k, attrs[k]); });
  append(node, children);
  return node;
}
function append(node, children) {
  if (children === null || children === undefined) return;
  if (Array.isArray(children)) { children.forEach(function (ch) { append(node, ch); }); return; }
  node.appendChild(typeof children === 'object' ? children : document.createTextNode(String(children)));
}
function fill(id, children) {
  var node = document.getElementById(id);
  while (node.firstChild) node.removeChild(node.firstChild);
  append(node, children);
  return node;
}
function sheetHref(c) { return 'handoff/' + encodeURIComponent(c.id) + '.html'; }
function efmt(v, d) { return esc(fmt(v, d)); }
var TO = D.true_objectives || D.objectives;
var state = {x: 'total_thickness_um', y: 'peak_strain_pct', colour: null, selected: 0};
if (TO.indexOf('peak_strain_pct') < 0 && TO.length >= 2) {
  // peak strain is not optimised in this study: open on a pair of its own objectives
  var strainKey = TO.filter(function (k) { return /strain/.test(k); })[0];
  if (strainKey && TO.indexOf('total_thickness_um') >= 0) { state.y = strainKey; state.x = 'total_thickness_um'; }
  else { state.y = TO[0]; state.x = TO[1]; }
}
window.strainline = {data: D, state: state, select: select, renders: 0};

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
  document.getElementById('front-note').textContent = (D.dominated.length ?
    'Faint grey: dominated feasible points kept by the run. ' : '') + (off.length ?
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
  var s = C[state.selected];
  if (s) traces.push({type: 'scatter', mode: 'markers', name: 'selected', hoverinfo: 'skip',
    x: [s.objectives[state.x]], y: [s.objectives[state.y]],
    marker: {size: 20, color: 'rgba(0,0,0,0)', line: {width: 2.5, color: '#d1343b'}}});
  Plotly.react('front', traces, {
    margin: {l: 64, r: 10, t: 10, b: 48}, showlegend: false, hovermode: 'closest',
    xaxis: {title: {text: esc(label(state.x))}, zeroline: false}, yaxis: {title: {text: esc(label(state.y))}, zeroline: false},
    plot_bgcolor: '#fbfcfd'}, {displaylogo: false, responsive: true});
}

function pattern(cov, base) {
  if (cov >= 0.999) return undefined;
  return {shape: '/', solidity: Math.max(0.05, Math.min(0.95, cov)), fgcolor: D.colours.copper, bgcolor: base,
          fillmode: 'replace', size: 7};
}

function drawSection(c) {
  var L = c.layers, total = L.length ? L[0].top_um : 0;
  var w = c.line.width_um || 0, g = (c.line.gap_um === null || c.line.gap_um === undefined) ? 0 : c.line.gap_um;
  var pair = /coupled/.test(c.line.type || '');
  var cop = c.line.type === 'coplanar';
  var span = Math.max(total * 2.6, 4 * w + 3 * g, 100);
  var x0 = -span / 2, x1 = span / 2;
  var traces = [], anns = [];
  L.forEach(function (l, i) {
    var fam = l.family, col = D.colours[fam] || D.colours.other;
    var isCu = l.kind === 'copper';
    var base = isCu ? (D.colours[familyOfFill(c, i)] || '#eadfc8') : col;
    var tr = {type: 'scatter', mode: 'lines', x: [x0, x1, x1, x0, x0], y: [l.bottom_um, l.bottom_um, l.top_um, l.top_um, l.bottom_um],
      fill: 'toself', fillcolor: isCu && l.coverage < 0.999 ? base : col, line: {color: '#555', width: 0.6},
      name: esc(l.name), hoveron: 'fills', hoverinfo: 'text',
      text: esc(l.name) + ' (' + esc(l.material) + ')<br>' + efmt(l.thickness_um) + ' um' +
        (isCu ? ', coverage ' + efmt(100 * l.coverage, 3) + ' %' : '')};
    if (l.kind === 'air-gap') tr.line = {color: '#888', width: 0.8, dash: 'dot'};
    if (isCu && l.coverage < 0.999 && i !== c.signal) tr.fillpattern = pattern(l.coverage, base);
    if (i === c.signal) tr.fillcolor = base;
    traces.push(tr);
  });
  var s = c.signal;
  if (s !== null && s !== undefined && L[s]) {
    var l = L[s], rects = [];
    if (pair) rects = [[-g / 2 - w, -g / 2], [g / 2, g / 2 + w]];
    else rects = [[-w / 2, w / 2]];
    if (cop) { rects.push([x0, -w / 2 - g]); rects.push([w / 2 + g, x1]); }
    rects.forEach(function (r, k) {
      var isSig = !cop || k === 0;
      traces.push({type: 'scatter', mode: 'lines', x: [r[0], r[1], r[1], r[0], r[0]],
        y: [l.bottom_um, l.bottom_um, l.top_um, l.top_um, l.bottom_um], fill: 'toself',
        fillcolor: isSig ? '#d1343b' : D.colours.copper, line: {color: '#611', width: 0.8},
        hoveron: 'fills', hoverinfo: 'text', name: isSig ? 'signal' : 'coplanar ground',
        text: (isSig ? 'signal trace ' : 'coplanar ground ') + efmt(w) + ' um wide'});
    });
    anns.push({x: rects[0][1], y: l.top_um, xref: 'x', yref: 'y', text: 'signal', showarrow: true, arrowhead: 0,
      ax: 30, ay: -22, font: {size: 11, color: '#a11'}});
  }
  (c.refs || []).forEach(function (r) {
    var l = L[r];
    if (!l || r === s) return;
    anns.push({x: x1, y: (l.top_um + l.bottom_um) / 2, xref: 'x', yref: 'y', text: 'reference: ' + esc(l.name),
      showarrow: true, arrowhead: 2, ax: 40, ay: 0, xanchor: 'left', font: {size: 11, color: '#1d4f91'}});
  });
  var na = c.bend.neutral_axis_um;
  var shapes = [];
  (Array.isArray(na) ? na : [na]).forEach(function (y) {
    if (typeof y !== 'number') return;
    shapes.push({type: 'line', x0: x0, x1: x1, y0: y, y1: y, line: {color: '#111', width: 1.6, dash: 'dash'}});
    anns.push({x: x0, y: y, text: 'neutral axis', showarrow: false, xanchor: 'left', yanchor: 'bottom', font: {size: 11}});
  });
  Plotly.react('section', traces, {
    title: {text: 'Cross-section to scale (' + esc(c.id) + ')', font: {size: 13}},
    margin: {l: 56, r: 170, t: 34, b: 40}, showlegend: false, hovermode: 'closest', shapes: shapes, annotations: anns,
    xaxis: {title: {text: 'width (um)'}, range: [x0, x1], zeroline: false, showgrid: false},
    yaxis: {title: {text: 'height from bottom face (um)'}, range: [-total * 0.04, total * 1.04], zeroline: false,
            scaleanchor: 'x', scaleratio: 1, showgrid: false},
    plot_bgcolor: '#fff'}, {displaylogo: false, responsive: true});
}

function familyOfFill(c, i) {
  var l = c.layers[i];
  if (l.fill_family) return l.fill_family;
  var nb = [c.layers[i + 1], c.layers[i - 1]].filter(function (x) { return x && x.kind === 'dielectric'; });
  var ad = nb.filter(function (x) { return x.family === 'adhesive'; });
  return (ad[0] || nb[0] || {family: 'other'}).family;
}

function drawStrain(c) {
  var L = c.layers, total = L.length ? L[0].top_um : 0;
  var traces = [], shapes = [], anns = [];
  L.forEach(function (l, i) {
    if (l.thickness_um <= 0 || l.kind === 'air-gap' || typeof l.strain_top_pct !== 'number') return;
    var isCu = l.kind === 'copper';
    traces.push({type: 'scatter', mode: isCu ? 'lines+markers' : 'lines', x: [l.strain_bottom_pct, l.strain_top_pct],
      y: [l.bottom_um, l.top_um], line: {color: isCu ? (i === c.signal ? '#d1343b' : D.colours.copper) : '#8896a5',
      width: isCu ? 4 : 1.5}, marker: {size: 7, symbol: 'diamond'}, name: esc(l.name), hoverinfo: 'text',
      text: [esc(l.name) + ' bottom face: ' + efmt(l.strain_bottom_pct) + ' %', esc(l.name) + ' top face: ' + efmt(l.strain_top_pct) + ' %']});
  });
  var lim = c.strain_limit_pct;
  if (typeof lim === 'number') {
    [-lim, lim].forEach(function (x) {
      shapes.push({type: 'line', x0: x, x1: x, y0: 0, y1: total, line: {color: '#c0392b', width: 1.2, dash: 'dot'}});
    });
    anns.push({x: lim, y: total, text: 'strain limit +/-' + efmt(lim, 3) + ' %', showarrow: false, xanchor: 'right',
      yanchor: 'bottom', font: {size: 11, color: '#c0392b'}, hovertext: esc(D.strain_limit_basis)});
  }
  var na = c.bend.neutral_axis_um;
  (Array.isArray(na) ? na : [na]).forEach(function (y) {
    if (typeof y !== 'number') return;
    shapes.push({type: 'line', xref: 'paper', x0: 0, x1: 1, y0: y, y1: y, line: {color: '#111', width: 1.2, dash: 'dash'}});
  });
  shapes.push({type: 'line', x0: 0, x1: 0, y0: 0, y1: total, line: {color: '#bbb', width: 1}});
  Plotly.react('strain', traces, {
    title: {text: 'Strain through the thickness (' + esc(c.id) + ')', font: {size: 13}},
    margin: {l: 56, r: 12, t: 34, b: 40}, showlegend: false, hovermode: 'closest', shapes: shapes, annotations: anns,
    xaxis: {title: {text: 'strain (%), tension positive'}, zeroline: false},
    yaxis: {title: {text: 'height from bottom face (um)'}, range: [-total * 0.04, total * 1.04], zeroline: false},
    plot_bgcolor: '#fbfcfd'}, {displaylogo: false, responsive: true});
}

function drawLayerTable(c) {
  var cols = [['name', 'layer', 't'], ['kind', 'kind', 't'], ['material', 'material', 't'], ['thickness_um', 'thickness (um)'],
    ['modulus_gpa', 'E (GPa)'], ['effective_modulus_gpa', 'E eff. (GPa)'], ['coverage', 'coverage'], ['dk', 'Dk'], ['df', 'Df'],
    ['strain_top_pct', 'strain top (%)'], ['strain_bottom_pct', 'strain bottom (%)']];
  var head = el('thead', null, el('tr', null, cols.map(function (k) { return el('th', {'class': k[2] || ''}, k[1]); })));
  var body = el('tbody', null, c.layers.map(function (l, i) {
    var tag = i === c.signal ? ' (signal)' : (c.refs.indexOf(i) >= 0 ? ' (reference)' : '');
    return el('tr', null, cols.map(function (k) {
      var v = l[k[0]];
      if (k[0] === 'name') v = (v || '') + tag;
      return el('td', {'class': k[2] || ''}, fmt(v));
    }));
  }));
  fill('layer-table', [head, body]);
  fill('cand-findings', c.findings.length ? [el('h2', null, 'Findings')].concat(c.findings.map(function (x) {
    return el('div', {'class': 'find'}, [el('span', {'class': 'sev'}, x.severity), x.message,
      x.source ? [' ', el('span', {'class': 'note'}, '[' + x.source + ']')] : null]);
  })) : []);
  var l = c.line, bd = c.bend, o = c.objectives;
  var parts = [];
  parts.push('line: ' + (l.type || '-') + ' on ' + (l.layer_name || (l.layer === undefined ? '-' : 'copper layer ' + l.layer)) + ', width ' + fmt(l.width_um) + ' um' +
    (l.gap_um !== null && l.gap_um !== undefined ? ', gap ' + fmt(l.gap_um) + ' um' : ''));
  if (l.z_diff_ohm) parts.push('Zdiff ' + fmt(l.z_diff_ohm) + ' ohm'); else if (l.z0_ohm) parts.push('Z0 ' + fmt(l.z0_ohm) + ' ohm');
  parts.push('bend: inner radius ' + fmt(bd.inner_radius_mm) + ' mm, ' + (bd.inside || '-') + ' face inside, ' +
    (bd.region || '-') + ', neutral axis ' + fmt(bd.neutral_axis_um) + ' um' +
    (Array.isArray(bd.neutral_axis_um) ? ' (one per bonded leaf, top to bottom)' : ''));
  if (bd.cycles_to_failure) parts.push('cycles to failure ' + fmt(bd.cycles_to_failure, 3));
  if (typeof c.strain_limit_pct === 'number') parts.push('strain limit +/-' + fmt(c.strain_limit_pct, 3) + ' % (' +
    D.strain_limit_basis + ')');
  var fc = l.field_check;
  if (fc && !fc.error) {
    var zf = fc.z_diff_ohm !== undefined && fc.z_diff_ohm !== null ? fc.z_diff_ohm : fc.z0_ohm;
    parts.push('field check: ' + fmt(zf) + ' ohm at this width (closed form ' +
      (fc.closed_form_error_pct >= 0 ? '+' : '') + fmt(fc.closed_form_error_pct, 3) + ' %), refined width ' +
      fmt(fc.width_um) + ' um' + (fc.refined_width_in_range ? '' : ' (outside the width range)'));
  } else if (fc && fc.error) {
    parts.push('field check not possible: ' + fc.error);
  }
  var figs = [];
  parts.forEach(function (p) { figs.push(p, ' \u00b7 '); });
  figs.push(el('a', {href: sheetHref(c)}, 'fabricator sheet'));
  fill('cand-figures', figs);
  document.getElementById('cand-title').textContent = 'Candidate ' + c.id + ': peak copper strain ' +
    fmt(o.peak_strain_pct) + ' %, ' + fmt(o.total_thickness_um) + ' um thick';
  var leg = ['copper', 'film', 'adhesive', 'core', 'laminate', 'cover', 'stiffener', 'air-gap'].filter(function (fm) {
    return c.layers.some(function (x) { return x.family === fm; }); });
  fill('legend', leg.map(function (fm) {
    return el('span', null, [el('i', {style: 'background:' + D.colours[fm]}), fm]); }).concat([
    el('span', null, [el('i', {style: 'background:#d1343b'}), 'signal trace']),
    el('span', null, 'hatching: partial copper coverage')]));
}

function drawParcoords() {
  var cv = colourValues();
  var dims = D.decisions.map(function (d) {
    if (!d.categorical) return {label: esc(d.label), values: d.values};
    var cats = Array.from(new Set(d.values)).sort();
    return {label: esc(d.label), values: d.values.map(function (v) { return cats.indexOf(v); }),
            tickvals: cats.map(function (v, i) { return i; }), ticktext: cats.map(esc),
            range: [-0.5, Math.max(cats.length - 0.5, 0.5)]};
  });
  if (!dims.length) return;
  Plotly.react('parcoords', [{type: 'parcoords', dimensions: dims, labelangle: -28, labelside: 'top',
    line: {color: cv.vals, colorscale: 'Viridis', showscale: true, colorbar: {title: {text: esc(cv.title)}}}}],
    {margin: {l: 70, r: 90, t: 110, b: 30}}, {displaylogo: false, responsive: true});
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
col('field_error_pct', 'closed-form error vs field (%)', function (c) {
  return c.line.field_check ? c.line.field_check.closed_form_error_pct : null; });
col('cycles_to_failure', 'cycles to failure', function (c) { return c.bend.cycles_to_failure; });
col('radius_to_thickness', 'R / thickness', function (c) { return c.bend.radius_to_thickness; });
col('neutral_axis_um', 'neutral axis (um)', function (c) { return c.bend.neutral_axis_um; });
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
    return el('tr', {'data-i': String(i), 'class': i === state.selected ? 'sel' : ''}, tcols.map(function (t) {
      var v = t.get(c);
      return el('td', {'class': t.s || typeof v !== 'number' ? 't' : '', 'data-v': v === undefined || v === null ? '' : String(v)},
        fmt(v));
    }).concat([el('td', {'class': 't'}, el('a', {href: sheetHref(c)}, 'sheet'))]));
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
      if (ev.target.tagName === 'A') return;
      select(Number(tr.getAttribute('data-i')));
    });
  });
}

function select(i) {
  if (!(i >= 0 && i < C.length)) return;
  state.selected = i;
  var c = C[i];
  drawSection(c); drawStrain(c); drawLayerTable(c); drawFront(); drawTable();
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
} else {
  drawFront();
  document.getElementById('cand-title').textContent = 'No feasible candidate in this run' +
    (D.infeasible ? ': ' + D.infeasible : '');
  document.querySelector('#candidate-card .row').style.display = 'none';
  document.getElementById('parcoords').parentNode.style.display = 'none';
}
document.getElementById('front').on('plotly_click', function (ev) {
  var p = ev.points.filter(function (p) { return p.data.name === 'candidates'; })[0];
  if (p) select(p.customdata);
});
})();

(function () {
'use strict';
var D = JSON.parse(document.getElementById('strainline-data').textContent);
var C = D.candidates;
var LABELS = {peak_strain_pct: 'peak copper strain (%)', total_thickness_um: 'total thickness (um)',
  signal_strain_pct: 'signal copper strain (%)', loss_db_per_m: 'loss (dB/m)', cycles: 'cycles',
  cycles_to_failure: 'cycles to failure', width_um: 'trace width (um)', yield_pct: 'impedance yield (%)',
  yield_shortfall_pct: 'impedance yield shortfall, 100 - yield (%)'};
function label(k) { return LABELS[k] || k.replace(/_/g, ' '); }
function fmt(v, d) {
  if (v === null || v === undefined) return '-';
  if (Array.isArray(v)) return v.map(function (x) { return fmt(x, d); }).join(' / ');
  if (typeof v !== 'number') return String(v);
  if (Number.isInteger(v) && Math.abs(v) < 1e15) return v.toLocaleString('en-US');
  d = d || 4;
  var a = Math.abs(v);
  if (v !== 0 && (a >= 1e6 || a < 1e-3)) return v.toExponential(d - 1);
  return Number(v.toPrecision(d)).toLocaleString('en-US', {maximumFractionDigits: 20});
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
// the palette lives in report.css (custom properties --family-<name>): one place, with its reason
(function () {
  var css = getComputedStyle(document.documentElement);
  Object.keys(D.colours).forEach(function (fam) {
    var v = css.getPropertyValue('--family-' + fam).trim();
    if (v) D.colours[fam] = v;
  });
  D.signalColour = css.getPropertyValue('--signal-trace').trim() || '#d1343b';
})();
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

function pattern(cov, base) {
  if (cov >= 0.999) return undefined;
  return {shape: '/', solidity: Math.max(0.05, Math.min(0.95, cov)), fgcolor: D.colours.copper, bgcolor: base,
          fillmode: 'replace', size: 7};
}

// where each line's conductors sit across the width: lines sharing a copper layer side by side, centred
function linePlacement(c) {
  var lines = (c.lines && c.lines.length ? c.lines : (c.line && c.line.width_um ? [Object.assign({signal: c.signal}, c.line)] : []))
    .filter(function (ln) { return ln.signal !== null && ln.signal !== undefined && c.layers[ln.signal]; });
  var out = [], byLayer = {};
  lines.forEach(function (ln) { (byLayer[ln.signal] = byLayer[ln.signal] || []).push(ln); });
  Object.keys(byLayer).forEach(function (key) {
    var group = byLayer[key], alone = group.length === 1;
    var foot = group.map(function (ln) {
      var w = ln.width_um || 0, g = typeof ln.gap_um === 'number' ? ln.gap_um : 0;
      return /coupled/.test(ln.type || '') ? 2 * w + g : (ln.type === 'coplanar' && !alone ? 3 * w + 2 * g : w);
    });
    var space = Math.max(40, Math.max.apply(null, group.map(function (ln) { return ln.width_um || 0; })));
    var width = foot.reduce(function (a, b) { return a + b; }, 0) + space * (group.length - 1), x = -width / 2;
    group.forEach(function (ln, k) {
      out.push({ln: ln, centre: x + foot[k] / 2, alone: alone, first: ln === lines[0]});
      x += foot[k] + space;
    });
  });
  // the span each layer's conductors need, with room of one trace width and one gap on either side
  return {list: out, extent: out.reduce(function (m, p, k) {
    var w = p.ln.width_um || 0, g = typeof p.ln.gap_um === 'number' ? p.ln.gap_um : 0;
    return Math.max(m, 2 * Math.abs(p.centre) + (/coupled/.test(p.ln.type || '') ? 2 * w + g : w) + 2 * w + 2 * g); }, 0)};
}

function drawSection(c, opts) {
  opts = opts || {};
  var L = c.layers, total = L.length ? L[0].top_um : 0;
  var place = linePlacement(c), many = place.list.length > 1, anns = [];
  var sigLayers = place.list.map(function (p) { return p.ln.signal; });
  if (!sigLayers.length) (c.signals || []).forEach(function (sg) {   // layers known to carry lines, no trace geometry
    if (!L[sg.signal]) return;
    var k = sigLayers.filter(function (x) { return x === sg.signal; }).length;
    sigLayers.push(sg.signal);
    anns.push({x: 0, y: L[sg.signal].top_um, xref: 'x', yref: 'y', text: esc(sg.name), showarrow: true, arrowhead: 0,
      ax: 30 + 70 * k, ay: -22, font: {size: 11, color: '#a11'}});
  });
  var span = Math.max(total * 2.6, place.extent * 1.15, 100);
  var x0 = -span / 2, x1 = span / 2;
  var traces = [];
  L.forEach(function (l, i) {
    var fam = l.family, col = D.colours[fam] || D.colours.other;
    var isCu = l.kind === 'copper', isSig = sigLayers.indexOf(i) >= 0;
    var base = isCu ? (D.colours[familyOfFill(c, i)] || '#eadfc8') : col;
    var cov = typeof l.coverage === 'number' ? l.coverage : 1;
    var tr = {type: 'scatter', mode: 'lines', x: [x0, x1, x1, x0, x0], y: [l.bottom_um, l.bottom_um, l.top_um, l.top_um, l.bottom_um],
      fill: 'toself', fillcolor: isCu && cov < 0.999 ? base : col, line: {color: '#555', width: 0.6},
      name: esc(l.name), hoveron: 'fills', hoverinfo: 'text',
      text: esc(l.name) + ' (' + esc(l.material) + ')<br>' + efmt(l.thickness_um) + ' um' +
        (isCu ? ', coverage ' + efmt(100 * cov, 3) + ' %' : '')};
    if (l.kind === 'air-gap') tr.line = {color: '#888', width: 0.8, dash: 'dot'};
    if (isCu && cov < 0.999 && !isSig) tr.fillpattern = pattern(cov, base);
    if (isSig) tr.fillcolor = place.list.length ? base : D.signalColour;   // no trace geometry: the whole layer marked
    traces.push(tr);
  });
  place.list.forEach(function (p) {
    var ln = p.ln, l = L[ln.signal], w = ln.width_um || 0, g = typeof ln.gap_um === 'number' ? ln.gap_um : 0, m = p.centre;
    var pair = /coupled/.test(ln.type || ''), cop = ln.type === 'coplanar', rects;
    var who = many ? 'line ' + esc(ln.name) + ': ' : '';
    if (pair) rects = [[m - g / 2 - w, m - g / 2], [m + g / 2, m + g / 2 + w]];
    else rects = [[m - w / 2, m + w / 2]];
    if (cop) {
      if (p.alone) { rects.push([x0, m - w / 2 - g]); rects.push([m + w / 2 + g, x1]); }
      else { rects.push([m - 1.5 * w - g, m - w / 2 - g]); rects.push([m + w / 2 + g, m + 1.5 * w + g]); }
    }
    rects.forEach(function (r, k) {
      var isSig = !cop || k === 0 || (pair && k === 1);
      traces.push({type: 'scatter', mode: 'lines', x: [r[0], r[1], r[1], r[0], r[0]],
        y: [l.bottom_um, l.bottom_um, l.top_um, l.top_um, l.bottom_um], fill: 'toself',
        fillcolor: isSig ? D.signalColour : D.colours.copper, line: {color: '#611', width: 0.8},
        hoveron: 'fills', hoverinfo: 'text',
        name: isSig ? (p.first ? 'signal' : 'signal ' + esc(ln.name)) : 'coplanar ground',
        text: who + (isSig ? 'signal trace ' : 'coplanar ground ') + efmt(w) + ' um wide'});
    });
    anns.push({x: rects[0][1], y: l.top_um, xref: 'x', yref: 'y', text: many ? esc(ln.name) : 'signal', showarrow: true,
      arrowhead: 0, ax: 30, ay: -22, font: {size: 11, color: '#a11'}});
  });
  var refs = (c.refs || []).slice();
  place.list.forEach(function (p) { (p.ln.refs || []).forEach(function (r) { if (refs.indexOf(r) < 0) refs.push(r); }); });
  refs.forEach(function (r) {
    var l = L[r];
    if (!l || sigLayers.indexOf(r) >= 0) return;
    anns.push({x: x1, y: (l.top_um + l.bottom_um) / 2, xref: 'x', yref: 'y', text: 'reference: ' + esc(l.name),
      showarrow: true, arrowhead: 2, ax: 40, ay: 0, xanchor: 'left', font: {size: 11, color: '#1d4f91'}});
  });
  var shapes = [], axes = neutralAxes(c);
  axes.forEach(function (y, k) {
    shapes.push({type: 'line', x0: x0, x1: x1, y0: y, y1: y, line: {color: '#111', width: 1.6, dash: 'dash'}});
    anns.push({x: x0, y: y, text: axes.length > 1 ? 'leaf ' + (k + 1) + ' neutral axis' : 'neutral axis',
      showarrow: false, xanchor: 'left', yanchor: 'bottom', font: {size: 11}});
  });
  Plotly.react(opts.target || 'section', traces, {
    title: {text: (opts.small ? '' : 'Cross-section to scale (') + esc(c.id) + (opts.small ? ', to scale' : ')'), font: {size: opts.small ? 12 : 13}},
    margin: opts.small ? {l: 48, r: 120, t: 28, b: 34} : {l: 56, r: 170, t: 34, b: 40}, showlegend: false,
    hovermode: 'closest', shapes: shapes, annotations: anns,
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

function leaves(c) {
  // leaf number of each layer (1 = top; air gaps separate leaves) and the height span of each leaf
  var leaf = 1, of = [], spans = [];
  c.layers.forEach(function (l, i) {
    if (l.kind === 'air-gap') { of.push(null); if (i > 0 && of[i - 1] !== null) leaf += 1; return; }
    of.push(leaf);
    var sp = spans[leaf - 1] || (spans[leaf - 1] = {bottom: l.bottom_um, top: l.top_um});
    sp.bottom = Math.min(sp.bottom, l.bottom_um); sp.top = Math.max(sp.top, l.top_um);
  });
  return {of: of, spans: spans};
}

function neutralAxes(c) {
  var na = (c.bend || {}).neutral_axis_um;
  return (Array.isArray(na) ? na : [na]).filter(function (y) { return typeof y === 'number'; });
}

function zoneView(c, z) {
  // the candidate as bent in zone z (its own strain profile and neutral axes); null z: the zone front.json shows
  var b = z === null || z === undefined ? null : c.bends[z];
  if (!b || !Array.isArray(b.profile) || b.profile.length !== c.layers.length) return c;
  var zl = (c.zone_limits || [])[z];            // the zone's own strain limit (its use, cycles and motion)
  return {id: c.id + ' in ' + b.name, signal: c.signal, bend: b, strain_limit_pct: zl ? zl.pct : c.strain_limit_pct,
    strain_limit_basis: zl ? zl.basis : null,
    layers: c.layers.map(function (l, i) {
      var p = b.profile[i];
      return Object.assign({}, l, {strain_top_pct: p.strain_top_pct, strain_bottom_pct: p.strain_bottom_pct});
    })};
}

function drawZones(c) {
  var many = c.bends.length > 1;
  fill('zone-buttons', many ? ['bend zone: '].concat(c.bends.map(function (b, z) {
    var bt = el('button', {'class': 'zone' + (b.name === c.bend.name ? ' on' : '')}, b.name);
    bt.addEventListener('click', function () {
      Array.prototype.forEach.call(document.querySelectorAll('#zone-buttons button'), function (x) { x.classList.remove('on'); });
      bt.classList.add('on');
      drawStrain(zoneView(c, z));
    });
    return bt;
  })) : []);
  fill('zone-table', many ? [el('thead', null, el('tr', null, ['bend zone', 'inner radius (mm)', 'use', 'cycles required',
    'peak copper strain (%)', 'strain limit (%)', 'cycles to failure', 'R / thickness'].map(function (t, k) {
      return el('th', {'class': k ? '' : 't'}, t); }))),
    el('tbody', null, c.bends.map(function (b, z) {
      var zl = (c.zone_limits || [])[z];
      return el('tr', null, [el('td', {'class': 't'}, b.name), el('td', null, fmt(b.inner_radius_mm)), el('td', null, fmt(b.use)),
        el('td', null, fmt(b.required_cycles)), el('td', null, fmt(b.peak_copper_strain_pct)),
        el('td', {title: zl ? zl.basis : ''}, zl && typeof zl.pct === 'number' ? '+/-' + fmt(zl.pct, 3) : '-'),
        el('td', null, fmt(b.cycles_to_failure, 3)), el('td', null, fmt(b.radius_to_thickness, 3))]);
    }))] : []);
  drawLines(c);
}

function zText(ln) { return ln.z_label === 'Zdiff' ? 'Zdiff' : 'Z0'; }
function yieldText(y) {
  return fmt(y.yield_pct, 4) + ' %' + (typeof y.stderr_pct === 'number' ? ' +/- ' + fmt(y.stderr_pct, 2) + ' %' : '');
}
function dominantText(y) {
  return y.dominant ? y.dominant + (typeof y.dominant_share_pct === 'number' ? ' (' + fmt(y.dominant_share_pct, 3) +
    ' % of the variance)' : '') : '-';
}
// every controlled line of the candidate: layer, geometry, impedance against its target, loss, yield
function drawLines(c) {
  var lines = c.lines || [];
  var withYield = lines.some(function (ln) { return ln.yield; });
  var withLength = lines.some(function (ln) { return typeof ln.insertion_loss_db === 'number' || typeof ln.length_mm === 'number'; });
  var head = ['line', 'type', 'layer', 'width / gap (um)', 'impedance (ohm)', 'target (ohm)', 'off target (%)',
    'loss (dB/m)'];
  if (withLength) head.push('length (mm)', 'insertion loss (dB)');
  if (withYield) head.push('impedance yield', 'dominant tolerance');
  var withField = lines.some(function (ln) { return ln.field; });
  if (withField) head.push('field check');
  fill('line-table', lines.length ? [el('thead', null, el('tr', null, head.map(function (t, k) {
    return el('th', {'class': k < 3 || t === 'dominant tolerance' || t === 'field check' ? 't' : ''}, t); }))),
    el('tbody', null, lines.map(function (ln) {
      var cells = [el('td', {'class': 't'}, ln.name), el('td', {'class': 't'}, fmt(ln.type)), el('td', {'class': 't'}, fmt(ln.layer)),
        el('td', null, fmt(ln.width_um) + (typeof ln.gap_um === 'number' ? ' / ' + fmt(ln.gap_um) : '')),
        el('td', {title: ln.model === 'field' ? 'decided by the 2-D field solution' : (ln.model ? 'decided by the closed form' : '')},
          ln.z_ohm === null ? '-' : zText(ln) + ' ' + fmt(ln.z_ohm)),
        el('td', null, fmt(ln.target_ohm) + (typeof ln.tolerance_pct === 'number' ? ' +/- ' + fmt(ln.tolerance_pct, 3) + ' %' : '')),
        el('td', null, typeof ln.error_pct === 'number' ? fmt(Number(ln.error_pct.toFixed(2)) + 0) : '-'),
        el('td', null, fmt(ln.loss_db_per_m) + (typeof ln.frequency_ghz === 'number' ? ' at ' + fmt(ln.frequency_ghz) + ' GHz' : ''))];
      if (withLength) cells.push(el('td', null, fmt(ln.length_mm)), el('td', {title: ln.insertion_loss_derived ?
        'loss per metre x length' : ''}, fmt(ln.insertion_loss_db)));
      if (withYield) cells.push(el('td', {'class': ln.yield ? 'yield' : ''}, ln.yield ? yieldText(ln.yield) : '-'),
        el('td', {'class': 't'}, ln.yield ? dominantText(ln.yield) : '-'));
      if (withField) cells.push(el('td', {'class': 't'}, ln.field ? (ln.field.mismatch ? 'MISMATCH ' : 'ok ') + ln.field.text : '-'));
      return el('tr', {'data-line': ln.name, 'class': ln.field && ln.field.mismatch ? 'mismatch' : ''}, cells);
    }))] : []);
}

function drawStrain(c) {
  var L = c.layers, total = L.length ? L[0].top_um : 0;
  var traces = [], shapes = [], anns = [];
  var lv = leaves(c), leafOf = lv.of, many = lv.spans.length > 1;
  L.forEach(function (l, i) {
    if (l.thickness_um <= 0 || l.kind === 'air-gap' || typeof l.strain_top_pct !== 'number') return;
    var isCu = l.kind === 'copper';
    traces.push({type: 'scatter', mode: isCu ? 'lines+markers' : 'lines', x: [l.strain_bottom_pct, l.strain_top_pct],
      y: [l.bottom_um, l.top_um], line: {color: isCu ? (i === c.signal ? D.signalColour : D.colours.copper) : (leafOf[i] % 2 ? '#8896a5' : '#4f6d8a'),
      width: isCu ? 4 : 1.5}, marker: {size: 7, symbol: 'diamond'}, name: esc(l.name), hoverinfo: 'text',
      text: [esc(l.name) + ' bottom face: ' + efmt(l.strain_bottom_pct) + ' %', esc(l.name) + ' top face: ' + efmt(l.strain_top_pct) + ' %']});
  });
  var lim = c.strain_limit_pct;
  if (typeof lim === 'number') {
    [-lim, lim].forEach(function (x) {
      shapes.push({type: 'line', x0: x, x1: x, y0: 0, y1: total, line: {color: '#c0392b', width: 1.2, dash: 'dot'}});
    });
    anns.push({x: lim, y: total, text: 'strain limit +/-' + efmt(lim, 3) + ' %', showarrow: false, xanchor: 'right',
      yanchor: 'bottom', font: {size: 11, color: '#c0392b'}, hovertext: esc(c.strain_limit_basis || D.strain_limit_basis)});
  }
  L.forEach(function (l) {
    if (l.kind !== 'air-gap') return;
    shapes.push({type: 'rect', xref: 'paper', x0: 0, x1: 1, y0: l.bottom_um, y1: l.top_um, line: {width: 0},
      fillcolor: 'rgba(150,160,170,0.18)', layer: 'below'});
    anns.push({xref: 'paper', x: 0.01, y: (l.bottom_um + l.top_um) / 2, text: 'air gap: leaves slide apart',
      showarrow: false, xanchor: 'left', font: {size: 10, color: '#666'}});
  });
  neutralAxes(c).forEach(function (y, k) {
    var sp = many ? lv.spans[k] : null;
    shapes.push({type: 'line', xref: 'paper', x0: 0, x1: 1, y0: y, y1: y, line: {color: '#111', width: 1.2, dash: 'dash'}});
    anns.push({xref: 'paper', x: 0.99, y: y, text: many ? 'leaf ' + (k + 1) + ' neutral axis' : 'neutral axis',
      showarrow: false, xanchor: 'right', yanchor: 'bottom', font: {size: 10.5}});
    if (sp) shapes.push({type: 'line', x0: 0, x1: 0, y0: sp.bottom, y1: sp.top, line: {color: '#999', width: 1}});
  });
  if (!many) shapes.push({type: 'line', x0: 0, x1: 0, y0: 0, y1: total, line: {color: '#bbb', width: 1}});
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
  var many = (c.lines || []).length > 1;
  var body = el('tbody', null, c.layers.map(function (l, i) {
    var on = (c.lines || []).filter(function (ln) { return ln.signal === i; }).map(function (ln) { return ln.name; });
    var isRef = c.refs.indexOf(i) >= 0 || (c.lines || []).some(function (ln) { return (ln.refs || []).indexOf(i) >= 0; });
    var tag = many && on.length ? ' (signal: ' + on.join(', ') + ')' : (i === c.signal ? ' (signal)' : (isRef ? ' (reference)' : ''));
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
  var lines = c.lines || [];
  if (lines.length > 1) {
    lines.forEach(function (ln) {
      parts.push('line ' + ln.name + ': ' + (ln.type || '-') + ' on ' + (ln.layer || '-') + ', width ' + fmt(ln.width_um) + ' um' +
        (typeof ln.gap_um === 'number' ? ', gap ' + fmt(ln.gap_um) + ' um' : '') +
        (ln.z_ohm === null ? '' : ', ' + zText(ln) + ' ' + fmt(ln.z_ohm) + ' ohm'));
    });
  } else {
    parts.push('line: ' + (l.type || '-') + ' on ' + (l.layer_name || (l.layer === undefined ? '-' : 'copper layer ' + l.layer)) + ', width ' + fmt(l.width_um) + ' um' +
      (l.gap_um !== null && l.gap_um !== undefined ? ', gap ' + fmt(l.gap_um) + ' um' : ''));
    if (l.z_diff_ohm) parts.push('Zdiff ' + fmt(l.z_diff_ohm) + ' ohm'); else if (l.z0_ohm) parts.push('Z0 ' + fmt(l.z0_ohm) + ' ohm');
  }
  lines.forEach(function (ln) {
    if (ln.yield) parts.push('impedance yield' + (lines.length > 1 ? ' of ' + ln.name : '') + ' ' + yieldText(ln.yield) +
      ', dominant tolerance: ' + dominantText(ln.yield));
  });
  parts.push('bend: inner radius ' + fmt(bd.inner_radius_mm) + ' mm, ' + (bd.inside || '-') + ' face inside, ' +
    (bd.region || '-') + ', neutral axis ' + fmt(bd.neutral_axis_um) + ' um' +
    (Array.isArray(bd.neutral_axis_um) ? ' (one per bonded leaf, top to bottom)' : ''));
  if (bd.cycles_to_failure) parts.push('cycles to failure ' + fmt(bd.cycles_to_failure, 3));
  if (typeof c.strain_limit_pct === 'number') parts.push('strain limit +/-' + fmt(c.strain_limit_pct, 3) + ' % (' +
    D.strain_limit_basis + ')');
  var fc = l.field_check;
  if (fc && !fc.error) {
    var zf = fc.z_diff_ohm !== undefined && fc.z_diff_ohm !== null ? fc.z_diff_ohm : fc.z0_ohm;
    // the figure compared is the one the search decided on: the field table or the closed form
    var decided = l.impedance_model === 'field' ? 'search field table ' : 'closed form ';
    parts.push('field check: ' + fmt(zf) + ' ohm at this width (' + decided +
      (fc.closed_form_error_pct >= 0 ? '+' : '') + fmt(fc.closed_form_error_pct, 3) + ' %), refined width ' +
      fmt(fc.width_um) + ' um' + (fc.refined_width_in_range ? '' : ' (outside the width range)'));
  } else if (fc && fc.error) {
    parts.push('field check not possible: ' + fc.error);
  }
  var ff = c.field_flag;
  fill('field-flag', ff && ff.mismatch ? [el('b', null, 'Field check disagrees: '), ff.text,
    typeof ff.error_pct === 'number' ? '; the ' + (l.impedance_model === 'field' ? "search's impedance" : 'closed form') +
      ' is ' + fmt(ff.error_pct, 3) + ' % off this field solution' : '',
    '. Use the field-refined width or a coupon before quoting.'] : []);
  document.getElementById('field-flag').style.display = ff && ff.mismatch ? '' : 'none';
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
    el('span', null, [el('i', {style: 'background:' + D.signalColour}), 'signal trace']),
    el('span', null, 'hatching: partial copper coverage')]));
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

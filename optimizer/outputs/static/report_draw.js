// The drawings of one candidate, shared by the report's views (static/report.js): the page data, number
// formatting, DOM building from data (text nodes and setAttribute only, never HTML strings), the cross-section
// to scale (every line on its layer), the strain profile of each bend zone, and the line, zone and layer tables.
window.strainlineDraw = (function () {
'use strict';
var D = JSON.parse(document.getElementById('strainline-data').textContent);
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
  return y.dominant ? y.dominant + (typeof y.dominant_share_pct === 'number' ? ', ' + fmt(y.dominant_share_pct, 3) +
    ' % of the variance' : '') : '-';
}
// every controlled line of the candidate: layer, geometry, impedance against its target, loss, yield
function drawLines(c) {
  var lines = c.lines || [];
  var withYield = lines.some(function (ln) { return ln.yield; });
  var withLength = lines.some(function (ln) { return typeof ln.insertion_loss_db === 'number' || typeof ln.length_mm === 'number'; });
  var head = ['line', 'type, layer', 'width / gap (um)', 'impedance (ohm)', 'target (ohm)', 'loss (dB/m)'];
  if (withLength) head.push('insertion loss (dB)');
  if (withYield) head.push('impedance yield', 'dominant tolerance');
  var withField = lines.some(function (ln) { return ln.field; });
  if (withField) head.push('field check');
  fill('line-table', lines.length ? [el('thead', null, el('tr', null, head.map(function (t, k) {
    return el('th', {'class': k < 2 || t === 'dominant tolerance' || t === 'field check' ? 't' : ''}, t); }))),
    el('tbody', null, lines.map(function (ln) {
      var off = typeof ln.error_pct === 'number' ? Number(ln.error_pct.toFixed(2)) + 0 : null;
      var cells = [el('td', {'class': 't'}, ln.name), el('td', {'class': 't'}, fmt(ln.type) + ' on ' + fmt(ln.layer)),
        el('td', null, fmt(ln.width_um) + (typeof ln.gap_um === 'number' ? ' / ' + fmt(ln.gap_um) : '')),
        el('td', {title: ln.model === 'field' ? 'decided by the 2-D field solution' : (ln.model ? 'decided by the closed form' : '')},
          (ln.z_ohm === null ? '-' : zText(ln) + ' ' + fmt(ln.z_ohm)) + (off === null ? '' : ' (' + (off >= 0 ? '+' : '') + fmt(off) + ' %)')),
        el('td', null, fmt(ln.target_ohm) + (typeof ln.tolerance_pct === 'number' ? ' +/- ' + fmt(ln.tolerance_pct, 3) + ' %' : '')),
        el('td', null, fmt(ln.loss_db_per_m) + (typeof ln.frequency_ghz === 'number' ? ' at ' + fmt(ln.frequency_ghz) + ' GHz' : ''))];
      if (withLength) cells.push(el('td', {title: ln.insertion_loss_derived ? 'loss per metre x length' : ''},
        typeof ln.insertion_loss_db === 'number' ? fmt(ln.insertion_loss_db) + ' over ' + fmt(ln.length_mm) + ' mm' : '-'));
      if (withYield) cells.push(el('td', {'class': ln.yield ? 'yield' : ''}, ln.yield ? yieldText(ln.yield) : '-'),
        el('td', {'class': 't dom'}, ln.yield ? dominantText(ln.yield) : '-'));
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


return {D: D, label: label, fmt: fmt, esc: esc, el: el, append: append, fill: fill, sheetHref: sheetHref, efmt: efmt, pattern: pattern, linePlacement: linePlacement, drawSection: drawSection, familyOfFill: familyOfFill, leaves: leaves, neutralAxes: neutralAxes, zoneView: zoneView, drawZones: drawZones, zText: zText, yieldText: yieldText, dominantText: dominantText, drawLines: drawLines, drawStrain: drawStrain, drawLayerTable: drawLayerTable};
})();

// Overtone HTML report: draws every section from the analysis document embedded in the
// page (script#overtone-data). Each section is built on its own; one that lacks its data
// says so, and one that fails shows its error without stopping the others.
(function () {
  'use strict';
  var data = JSON.parse(document.getElementById('overtone-data').textContent);
  var pageInfo = data.page || {};
  var root = document.getElementById('page');
  var STICK_FWHM_CM1 = 10; // width of the broadened curves: a typical condensed-phase band
  var SLOPE_RANGE_FRACTION = 0.35; // the VPT2 line is drawn over this part of the backbone
  var MIXING_SHOWN = 4;
  var LABELLED_LEVELS = 40; // more level names than this overlap on the axis: tooltips only
  var VIEWER_ZOOM = 1.4; // zoomTo leaves room for the whole bounding sphere; the swing fits in less

  function el(tag, attributes, children) {
    var node = document.createElement(tag);
    Object.keys(attributes || {}).forEach(function (key) {
      if (key === 'text') node.textContent = attributes[key];
      else if (key === 'className') node.className = attributes[key];
      else node.setAttribute(key, attributes[key]);
    });
    (children || []).forEach(function (child) {
      if (child !== null && child !== undefined)
        node.appendChild(typeof child === 'string' ? document.createTextNode(child) : child);
    });
    return node;
  }
  function isNumber(value) { return typeof value === 'number' && isFinite(value); }
  function fixed(value, digits) { return isNumber(value) ? value.toFixed(digits) : '—'; }
  function list(value) { return Array.isArray(value) ? value : []; }

  function table(headers, rows, options) {
    options = options || {};
    var head = el('tr', {}, headers.map(function (h) { return el('th', { text: h }); }));
    var body = rows.map(function (cells, index) {
      var row = el('tr', {}, cells.map(function (cell) {
        var text = cell === null || cell === undefined ? '—' : String(cell);
        return el('td', { text: text, className: /^[-+]?[0-9][0-9.e+-]*$/.test(text) || text === '—' ? '' : 'text' });
      }));
      if (options.onPick) {
        row.className = 'pick';
        row.addEventListener('click', function () { options.onPick(index, row); });
      }
      return row;
    });
    var t = el('table', { className: 'grid' }, [el('thead', {}, [head]), el('tbody', {}, body)]);
    if (options.name) t.setAttribute('data-table', options.name);
    return t;
  }

  function scrolled(node) { return el('div', { className: 'tablebox' }, [node]); }

  // A plot with its caption and an SVG download button (the plot's own SVG, styles inlined
  // by the plotting library).
  function figure(plot, name, caption) {
    // A plot with a legend is a <figure> whose last svg is the chart itself.
    var svgs = plot.tagName.toLowerCase() === 'svg' ? [plot] : plot.querySelectorAll('svg');
    var svg = svgs[svgs.length - 1];
    var button = el('button', { className: 'svg', type: 'button', text: 'SVG' });
    button.addEventListener('click', function () {
      var text = new XMLSerializer().serializeToString(svg);
      var link = el('a', { download: name + '.svg', href: URL.createObjectURL(new Blob([text], { type: 'image/svg+xml' })) });
      document.body.appendChild(link);
      link.click();
      link.remove();
    });
    var box = el('figure', { className: 'plot', 'data-plot': name }, [plot, el('figcaption', {}, [caption || '', button])]);
    return box;
  }

  var nav = el('nav', { className: 'sections' });
  var main = el('main');

  function section(id, title, lead, build) {
    var body = el('section', { className: 'part', id: id, 'data-section': id }, [el('h2', { text: title })]);
    if (lead) body.appendChild(el('p', { className: 'lead', text: lead }));
    nav.appendChild(el('a', { href: '#' + id, text: title }));
    main.appendChild(body);
    try {
      build(body);
    } catch (error) {
      body.appendChild(el('p', { className: 'absent', text: 'This section could not be drawn: ' + error.message }));
      throw error;
    }
  }
  function absent(body, text) { body.appendChild(el('p', { className: 'absent', text: text })); }

  // ---------- header and summary ----------
  function header() {
    var molecule = data.molecule || {};
    var opt = data.optimization || {};
    var warnings = allWarnings();
    var chips = [
      el('span', { className: 'chip', text: 'point group ' + ((data.symmetry || {}).display_name || data.point_group || '?') }),
      el('span', { className: 'chip', text: list(data.modes).length + ' modes' }),
      el('span', { className: 'chip' + (opt.converged === false ? ' warn' : ''), text: 'optimization: ' + (opt.status || 'unknown') }),
      el('span', { className: 'chip', text: list(data.levels).length + ' VPT2 levels' }),
      el('span', { className: 'chip', text: list(data.families).length + ' families' })
    ];
    if (warnings.length) chips.push(el('span', { className: 'chip warn', text: warnings.length + ' warnings' }));
    return el('header', { className: 'run' }, [
      el('h1', { text: (molecule.title || molecule.formula || 'molecule') + (molecule.formula ? ' — ' + molecule.formula : '') }),
      el('div', { className: 'facts', text: 'potential: ' + ((data.potential || {}).description || 'unknown') }),
      el('div', {}, chips)
    ]);
  }

  function allWarnings() {
    var found = list(data.warnings).slice();
    [['anharmonic', data.anharmonic_summary], ['families', data.families_summary], ['intensities', data.intensity_model],
     ['force constants', data.force_constants]].forEach(function (pair) {
      if (pair[1]) list(pair[1].warnings).forEach(function (w) { found.push(pair[0] + ': ' + w); });
    });
    if (data.anharmonic_skipped) found.push('anharmonic stage skipped: ' + data.anharmonic_skipped);
    if (data.families_skipped) found.push('families stage skipped: ' + data.families_skipped);
    list(data.family_orbit_warnings).forEach(function (w) { found.push('orbit animation: ' + w); });
    return found;
  }

  function seconds(value) {
    if (!isNumber(value)) return '—';
    return value < 1 ? (1000 * value).toPrecision(3) + ' ms' : value.toFixed(2) + ' s';
  }

  function buildSummary(body) {
    var molecule = data.molecule || {};
    var opt = data.optimization || {};
    var harmonic = data.harmonic || {};
    var facts = [
      ['molecule', (molecule.title || '') + ' (' + (molecule.formula || '?') + '), charge ' + molecule.charge +
        ', multiplicity ' + molecule.spin_multiplicity],
      ['input', molecule.source || '—'],
      ['potential', (data.potential || {}).description || '—'],
      ['point group', ((data.symmetry || {}).display_name || data.point_group || '—') +
        ((data.symmetry || {}).vibrational_representation_display ? ', Γvib = ' + data.symmetry.vibrational_representation_display : '')],
      ['optimization', opt.message || opt.status || '—'],
      ['Hessian', (harmonic.hessian_method || '—') + (harmonic.linear ? ', linear molecule' : '')],
      ['anharmonic stage', data.anharmonic_summary ? data.anharmonic_summary.message : (data.anharmonic_skipped || 'not run')],
      ['families stage', data.families_summary ? list(data.families).length + ' families, ' + data.families_summary.points + ' orbits' : (data.families_skipped || 'not run')],
      ['intensities', data.intensity_model ? data.intensity_model.source : 'not computed: sticks of equal height'],
      ['program', ((data.program || {}).name || 'overtone') + ' ' + ((data.program || {}).version || '')]
    ];
    body.appendChild(el('dl', { className: 'facts' }, [].concat.apply([], facts.map(function (f) {
      return [el('dt', { text: f[0] }), el('dd', { text: String(f[1]) })];
    }))));
    var stage = harmonic.stage_seconds || {};
    var timings = Object.keys(stage).map(function (k) { return [k, seconds(stage[k])]; });
    if (data.force_constants) timings.push(['force constants', seconds(data.force_constants.seconds)]);
    if (data.anharmonic_summary) timings.push(['anharmonic', seconds(data.anharmonic_summary.seconds)]);
    if (data.families_summary) timings.push(['families', seconds(data.families_summary.seconds)]);
    body.appendChild(el('h3', { text: 'Timings' }));
    body.appendChild(table(['stage', 'time'], timings, { name: 'timings' }));
    var warnings = allWarnings();
    body.appendChild(el('h3', { text: 'Warnings' }));
    if (warnings.length) body.appendChild(el('ul', { className: 'warnings' }, warnings.map(function (w) { return el('li', { text: w }); })));
    else absent(body, 'none');
  }

  // ---------- 3-D viewers ----------
  var viewers = [];
  function atoms() { return list(data.atoms); }
  // The viewer looks down z: the molecule is turned so that its largest extent lies along x
  // and its smallest along z (a linear or planar molecule is then seen side on). An odd
  // permutation of the axes would mirror it; flipping the last axis undoes that.
  var viewAxes = null;
  function axesForView() {
    if (viewAxes) return viewAxes;
    var extents = [0, 1, 2].map(function (k) {
      var values = atoms().map(function (atom) { return atom.position_angstrom[k]; });
      return Math.max.apply(null, values) - Math.min.apply(null, values);
    });
    var order = [0, 1, 2].sort(function (a, b) { return extents[b] - extents[a] || a - b; });
    var inversions = (order[0] > order[1]) + (order[0] > order[2]) + (order[1] > order[2]);
    viewAxes = { order: order, lastSign: inversions % 2 ? -1 : 1 };
    return viewAxes;
  }
  function xyzFrames(frames, comment) {
    var axes = axesForView();
    frames = frames.map(function (positions) {
      var turned = [];
      for (var a = 0; a < positions.length; a += 3)
        turned.push(positions[a + axes.order[0]], positions[a + axes.order[1]], axes.lastSign * positions[a + axes.order[2]]);
      return turned;
    });
    var text = '';
    frames.forEach(function (positions, f) {
      text += atoms().length + '\n' + comment + ' frame ' + (f + 1) + '\n';
      atoms().forEach(function (atom, a) {
        text += atom.element + ' ' + positions[3 * a].toFixed(5) + ' ' + positions[3 * a + 1].toFixed(5) + ' ' + positions[3 * a + 2].toFixed(5) + '\n';
      });
    });
    return text;
  }
  function makeViewer(container) {
    var viewer = $3Dmol.createViewer(container, { backgroundColor: 'white', antialias: true });
    viewers.push(viewer);
    return viewer;
  }
  function showFrames(viewer, frames, comment) {
    viewer.stopAnimate();
    viewer.clear();
    viewer.addModelsAsFrames(xyzFrames(frames, comment), 'xyz');
    viewer.setStyle({}, { stick: { radius: 0.14 }, sphere: { scale: 0.3 } });
    viewer.zoomTo();
    viewer.zoom(VIEWER_ZOOM);
    viewer.render();
    viewer.animate({ loop: 'forward', reps: 0, interval: 70 });
  }

  // Frames of one period at the turning point of v = 1, as in animations/mode-NN.xyz.
  function modeFrames(mode, index) {
    var turning = list(pageInfo.mode_turning_point_angstrom)[index];
    var count = pageInfo.mode_frames || 20;
    var directions = atoms().map(function (atom, a) {
      var v = mode.mass_weighted_vector[a];
      var root = Math.sqrt(atom.mass_da);
      return [v[0] / root, v[1] / root, v[2] / root];
    });
    var largest = Math.max.apply(null, directions.map(function (d) { return Math.hypot(d[0], d[1], d[2]); }));
    var scale = isNumber(turning) && largest > 0 ? turning / largest : 0;
    var frames = [];
    for (var f = 0; f < count; f++) {
      var s = scale * Math.sin(2 * Math.PI * f / count);
      var positions = [];
      atoms().forEach(function (atom, a) {
        for (var k = 0; k < 3; k++) positions.push(atom.position_angstrom[k] + s * directions[a][k]);
      });
      frames.push(positions);
    }
    return frames;
  }

  // ---------- modes ----------
  function intensityKnown(items, key) { return items.some(function (m) { return isNumber(m[key]); }); }

  function buildModes(body) {
    var modes = list(data.modes);
    var ir = intensityKnown(modes, 'ir_intensity_km_per_mol');
    var raman = intensityKnown(modes, 'raman_activity_a4_per_u');
    var headers = ['mode', 'ν', 'species', 'wavenumber / cm⁻¹', 'IR', 'Raman'];
    // Activities by the selection rules; the intensities (when computed) after them.
    if (ir) headers.push('IR / km mol⁻¹');
    if (raman) headers.push('Raman / Å⁴ u⁻¹');
    var rows = modes.map(function (m) {
      var row = [m.number, m.fundamental ? 'ν' + m.fundamental : '', m.species || '',
        (m.imaginary ? 'i' : '') + fixed(m.frequency_cm1, 2), m.ir_active ? 'active' : 'inactive', m.raman_active ? 'active' : 'inactive'];
      if (ir) row.push(fixed(m.ir_intensity_km_per_mol, 2));
      if (raman) row.push(fixed(m.raman_activity_a4_per_u, 2));
      return row;
    });
    var viewerBox = el('div', { className: 'viewer', id: 'mode-viewer', 'data-viewer': 'mode' });
    var caption = el('div', { className: 'viewer-caption' });
    var chosen = null;
    var t = table(headers, rows, {
      name: 'modes',
      onPick: function (index, row) {
        if (chosen) chosen.className = 'pick';
        row.className = 'pick chosen';
        chosen = row;
        var m = modes[index];
        showFrames(viewer, modeFrames(m, index), 'mode ' + m.number);
        caption.textContent = 'Mode ' + m.number + (m.species ? ' (' + m.species + ')' : '') + ', ' + fixed(m.frequency_cm1, 1) +
          ' cm⁻¹: one period, amplitude of the classical turning point of v = 1, E = (3/2)ħω (largest atom displacement ' +
          fixed(list(pageInfo.mode_turning_point_angstrom)[index], 3) + ' Å). Click a row to animate another mode.';
      }
    });
    body.appendChild(el('div', { className: 'split wide-first' }, [el('div', { className: 'tablebox' }, [t]), el('div', {}, [viewerBox, caption])]));
    var viewer = makeViewer(viewerBox);
    var first = modes.findIndex(function (m) { return !m.imaginary && m.mass_weighted_vector; });
    if (first >= 0) t.querySelectorAll('tbody tr')[first].click();
  }

  // ---------- levels ----------
  function levelPosition(level) {
    return isNumber(level.resonance_corrected_cm1) ? level.resonance_corrected_cm1 : level.anharmonic_cm1;
  }
  function mixingText(level) {
    // Components of at least 1 %, at most MIXING_SHOWN of them (all are in analysis.json).
    var shown = list(level.mixing).filter(function (c) { return c.weight >= 0.005; });
    var text = shown.slice(0, MIXING_SHOWN).map(function (c) { return Math.round(100 * c.weight) + '% ' + c.label; }).join(' + ');
    return shown.length > MIXING_SHOWN ? text + ' + …' : text;
  }

  function buildLevels(body) {
    var levels = list(data.levels).filter(function (l) { return isNumber(levelPosition(l)); });
    if (!levels.length) return absent(body, 'No VPT2 levels: the anharmonic stage ' + (data.anharmonic_skipped ? 'was skipped: ' + data.anharmonic_skipped : 'did not run') + '.');
    var rows = levels.map(function (l) { return { label: l.label, kind: l.kind, position: levelPosition(l), polyad: l.polyad, harmonic: l.harmonic_cm1 }; });
    var inPolyad = rows.filter(function (r) { return r.polyad !== null && r.polyad !== undefined; });
    var marks = [
      Plot.tickX(rows, { x: 'position', y: 'kind', stroke: 'kind', strokeWidth: 2, className: 'mk-level', title: function (r) { return r.label + ': ' + r.position.toFixed(1) + ' cm⁻¹'; } }),
      Plot.text(rows.length <= LABELLED_LEVELS ? rows : [], { x: 'position', y: 'kind', text: 'label', dy: -14, fontSize: 10, fill: '#1d2430' }),
      Plot.line(inPolyad, { x: 'position', y: 'kind', z: 'polyad', stroke: '#b5542c', strokeDasharray: '4,3', strokeWidth: 1.5, curve: 'linear', className: 'mk-polyad', sort: 'position' }),
      Plot.dot(inPolyad, { x: 'position', y: 'kind', r: 5, stroke: '#b5542c', fill: 'none' })
    ];
    var plot = Plot.plot({
      width: 1080, height: 230, marginLeft: 100,
      x: { label: 'level above the ground state / cm⁻¹', grid: true },
      y: { label: null, domain: ['fundamental', 'overtone', 'combination'] },
      color: { domain: ['fundamental', 'overtone', 'combination'], range: ['#1f6f78', '#6b4c9a', '#8a6d1d'] },
      marks: marks
    });
    body.appendChild(figure(plot, 'levels', 'One tick per level (resonance-corrected where a polyad holds it); dashed lines join the levels of one polyad (circled).'));
    var mixed = levels.filter(function (l) { return list(l.mixing).length; });
    body.appendChild(el('h3', { text: 'Polyads and mixing' }));
    if (mixed.length) body.appendChild(scrolled(table(['polyad', 'level', 'deperturbed / cm⁻¹', 'in the polyad / cm⁻¹', 'mixing'],
      mixed.map(function (l) { return [l.polyad, l.label, fixed(l.anharmonic_cm1, 1), fixed(l.resonance_corrected_cm1, 1), mixingText(l)]; }), { name: 'polyads' })));
    else absent(body, 'No polyad: no resonance passed the criteria.');
    body.appendChild(el('h3', { text: 'Resonance candidates' }));
    var resonances = list(data.resonances);
    if (isNumber(data.resonance_candidates_total) && data.resonance_candidates_total > resonances.length)
      body.appendChild(el('p', { className: 'note', text: 'Showing the ' + resonances.length + ' flagged and strongest of ' + data.resonance_candidates_total + ' candidates; all are in analysis.json.' }));
    if (resonances.length) body.appendChild(scrolled(table(['pair', 'kind', 'gap Δ / cm⁻¹', 'coupling W / cm⁻¹', 'criterion (W⁴/|Δ|³ or W) / cm⁻¹', 'symmetry', 'flagged'],
      resonances.map(function (r) { return [r.label, r.kind, fixed(r.gap_cm1, 2), fixed(r.coupling_cm1, 2), fixed(r.criterion_value, 3), r.symmetry_allowed ? 'allowed' : 'forbidden', r.flagged ? 'yes' : 'no']; }), { name: 'resonances' })));
    else absent(body, 'No resonance candidate within the gap windows.');
  }

  // ---------- spectrum ----------
  function stickHeights(items, key) {
    if (!key) return items.map(function () { return 1; });
    var values = items.map(function (i) { return isNumber(i[key]) ? i[key] : 0; });
    var largest = Math.max.apply(null, values.concat([0]));
    return values.map(function (v) { return largest > 0 ? v / largest : 0; });
  }
  function broadened(sticks, lower, upper) {
    var half = STICK_FWHM_CM1 / 2;
    var step = Math.max(0.5, (upper - lower) / 2000);
    var points = [];
    for (var x = lower; x <= upper; x += step) {
      var y = 0;
      for (var i = 0; i < sticks.length; i++) { var d = x - sticks[i].x; y += sticks[i].y * half * half / (d * d + half * half); }
      points.push({ x: x, y: y });
    }
    var top = Math.max.apply(null, points.map(function (p) { return p.y; }).concat([1e-300]));
    points.forEach(function (p) { p.y /= top; });
    return points;
  }
  function observedMarks(lower, upper) {
    var observed = pageInfo.observed;
    if (!observed) return [];
    var bands = observed.bands.map(function (b) { return { x: b[0], y: b[1] }; }).filter(function (b) { return b.x >= lower && b.x <= upper; });
    var withIntensity = bands.filter(function (b) { return isNumber(b.y); });
    var top = Math.max.apply(null, withIntensity.map(function (b) { return Math.abs(b.y); }).concat([1e-300]));
    bands.forEach(function (b) { b.y = isNumber(b.y) ? b.y / top : 1; });
    if (bands.length > 200 && withIntensity.length === bands.length)
      return [Plot.line(bands, { x: 'x', y: 'y', stroke: '#a8322d', strokeWidth: 1.2, className: 'mk-observed' })];
    return [Plot.ruleX(bands, { x: 'x', y1: 0, y2: 'y', stroke: '#a8322d', strokeDasharray: '2,2', strokeWidth: 1.5, className: 'mk-observed' })];
  }

  function buildSpectrum(body) {
    var modes = list(data.modes).filter(function (m) { return !m.imaginary && isNumber(m.frequency_cm1); });
    var levels = list(data.levels).filter(function (l) { return isNumber(levelPosition(l)); });
    var irKnown = intensityKnown(modes, 'ir_intensity_km_per_mol') || intensityKnown(levels, 'ir_intensity_km_per_mol');
    var ramanKnown = intensityKnown(modes, 'raman_activity_a4_per_u') || intensityKnown(levels, 'raman_activity_a4_per_u');
    var choices = [];
    if (irKnown) choices.push(['ir_intensity_km_per_mol', 'IR intensity']);
    if (ramanKnown) choices.push(['raman_activity_a4_per_u', 'Raman activity']);
    choices.push(['', 'equal heights']);
    var select = el('select', { 'aria-label': 'stick heights' }, choices.map(function (c) { return el('option', { value: c[0], text: c[1] }); }));
    var note = el('p', { className: 'note' });
    var holder = el('div');
    body.appendChild(el('p', {}, ['Stick heights: ', select]));
    body.appendChild(note);
    body.appendChild(holder);
    function draw() {
      var key = select.value;
      var positions = levels.map(levelPosition).concat(modes.map(function (m) { return m.frequency_cm1; }));
      if (pageInfo.observed) pageInfo.observed.bands.forEach(function (b) { positions.push(b[0]); });
      var lower = Math.max(0, Math.min.apply(null, positions) - 150);
      var upper = Math.max.apply(null, positions) + 150;
      var harmonic = modes.map(function (m, i) { return { x: m.frequency_cm1, y: stickHeights(modes, key)[i], label: 'mode ' + m.number }; });
      var anharmonic = levels.map(function (l, i) { return { x: levelPosition(l), y: stickHeights(levels, key)[i], label: l.label }; });
      var marks = [Plot.ruleY([0])];
      if (anharmonic.length) {
        marks.push(Plot.line(broadened(anharmonic, lower, upper), { x: 'x', y: 'y', stroke: '#1f6f78', strokeOpacity: 0.55, className: 'mk-anharmonic-curve' }));
        marks.push(Plot.ruleX(anharmonic, { x: 'x', y1: 0, y2: 'y', stroke: '#1f6f78', strokeWidth: 2, className: 'mk-anharmonic-stick', title: function (s) { return s.label + ' ' + s.x.toFixed(1) + ' cm⁻¹'; } }));
      }
      marks.push(Plot.line(broadened(harmonic, lower, upper).map(function (p) { return { x: p.x, y: -p.y }; }), { x: 'x', y: 'y', stroke: '#8a6d1d', strokeOpacity: 0.55, className: 'mk-harmonic-curve' }));
      marks.push(Plot.ruleX(harmonic, { x: 'x', y1: 0, y2: function (s) { return -s.y; }, stroke: '#8a6d1d', strokeWidth: 2, className: 'mk-harmonic-stick', title: function (s) { return s.label + ' ' + s.x.toFixed(1) + ' cm⁻¹'; } }));
      observedMarks(lower, upper).forEach(function (m) { marks.push(m); });
      var plot = Plot.plot({
        width: 1080, height: 360,
        x: { label: 'wavenumber / cm⁻¹', domain: [lower, upper], grid: true },
        y: { label: '↑ VPT2 levels (relative)   ↓ harmonic modes (relative)', domain: [-1.05, 1.05] },
        marks: marks
      });
      holder.replaceChildren(figure(plot, 'spectrum', 'Sticks and Lorentzian curves (FWHM ' + STICK_FWHM_CM1 + ' cm⁻¹), each set scaled to its strongest line' +
        (pageInfo.observed ? '; dashed red: observed (' + pageInfo.observed.source + ')' : '') + '.'));
      note.textContent = key ? 'Heights: ' + (choices.find(function (c) { return c[0] === key; })[1]) +
        (data.intensity_model ? ' (' + data.intensity_model.source + ')' : '') + '; a line without a value has zero height.'
        : 'No intensities in this run (or equal heights chosen): every stick has the same height; positions only.';
    }
    select.addEventListener('change', draw);
    draw();
    if (!levels.length) absent(body, 'Only harmonic sticks: the anharmonic stage did not run.');
  }

  // ---------- families ----------
  function modeByNumber(number) { return list(data.modes).find(function (m) { return m.number === number; }); }
  // VPT2 slope dω/dE = 2x_ii/ω_i of the family's mode (vibrational x, without the Coriolis part).
  function vpt2Slope(family) {
    var anh = data.anharmonicity;
    var numbers = list(family.mode_numbers);
    if (!anh || numbers.length !== 1) return null;
    var i = list(anh.mode_numbers).indexOf(numbers[0]);
    var mode = modeByNumber(numbers[0]);
    var x = anh.x_vibrational_cm1 && i >= 0 ? anh.x_vibrational_cm1[i][i] : null;
    if (!mode || !isNumber(x)) return null;
    return { omega: mode.frequency_cm1, x: x, slope: 2 * x / mode.frequency_cm1 };
  }

  function familyName(f) { return 'family ' + f.family + ' (' + list(f.fundamentals).map(function (n) { return 'ν' + n; }).join(', ') + (f.species ? ', ' + f.species : '') + ')'; }

  function backboneOverview(families) {
    var points = [];
    families.forEach(function (f) {
      var origin = vpt2Slope(f) ? vpt2Slope(f).omega : (list(f.points)[0] || {}).frequency_cm1;
      list(f.points).forEach(function (p) { points.push({ family: familyName(f), energy: p.energy_cm1, shift: p.frequency_cm1 - origin }); });
    });
    var plot = Plot.plot({
      width: 1080, height: 320, color: { legend: true },
      x: { label: 'energy above the minimum / cm⁻¹', grid: true }, y: { label: 'frequency − harmonic wavenumber / cm⁻¹', grid: true },
      marks: [Plot.ruleY([0]), Plot.line(points, { x: 'energy', y: 'shift', z: 'family', stroke: 'family', strokeWidth: 2, className: 'mk-backbone' })]
    });
    return figure(plot, 'backbones', 'One backbone per continued family: shift of the orbit frequency from the harmonic wavenumber of its mode (or from its first orbit).');
  }

  function familyBackbone(f) {
    var points = list(f.points).map(function (p, i) { return { i: i, energy: p.energy_cm1, frequency: p.frequency_cm1, amplitude: p.amplitude_angstrom, stable: p.stable ? 'stable' : 'unstable' }; });
    var slope = vpt2Slope(f);
    var lastEnergy = Math.max.apply(null, points.map(function (p) { return p.energy; }));
    var marks = [
      Plot.line(points, { x: 'energy', y: 'frequency', stroke: '#9aa3ad', strokeWidth: 1 }),
      Plot.dot(points, { x: 'energy', y: 'frequency', fill: 'stable', r: 3, className: 'mk-orbit' })
    ];
    var omegaOrigin = slope ? slope.omega : (points.length ? points[0].frequency : null);
    if (isNumber(omegaOrigin)) marks.push(Plot.dot([{ energy: 0, frequency: omegaOrigin }], { x: 'energy', y: 'frequency', symbol: 'diamond', r: 6, fill: '#1d2430', className: 'mk-harmonic' }));
    if (slope) {
      var end = SLOPE_RANGE_FRACTION * lastEnergy;
      marks.push(Plot.line([{ energy: 0, frequency: slope.omega }, { energy: end, frequency: slope.omega + slope.slope * end }],
        { x: 'energy', y: 'frequency', stroke: '#b5542c', strokeWidth: 2, strokeDasharray: '6,3', className: 'mk-vpt2-slope' }));
    }
    var events = list(f.events).map(function (e) { return { energy: e.energy_cm1, kind: e.kind }; });
    if (events.length) {
      marks.push(Plot.ruleX(events, { x: 'energy', stroke: '#6b4c9a', strokeDasharray: '2,3', className: 'mk-event' }));
      marks.push(Plot.text(events, { x: 'energy', text: 'kind', frameAnchor: 'top', dy: 6, fontSize: 10, fill: '#6b4c9a' }));
    }
    var byEnergy = Plot.plot({
      width: 520, height: 280, color: { domain: ['stable', 'unstable'], range: ['#2f7d3a', '#a8322d'], legend: true },
      x: { label: 'energy / cm⁻¹', grid: true }, y: { label: 'frequency / cm⁻¹', grid: true }, marks: marks
    });
    var byAmplitude = Plot.plot({
      width: 520, height: 280, color: { domain: ['stable', 'unstable'], range: ['#2f7d3a', '#a8322d'], legend: true },
      x: { label: 'largest atom amplitude / Å', grid: true }, y: { label: 'frequency / cm⁻¹', grid: true },
      marks: [Plot.line(points, { x: 'amplitude', y: 'frequency', stroke: '#9aa3ad' }), Plot.dot(points, { x: 'amplitude', y: 'frequency', fill: 'stable', r: 3 })]
    });
    var slopeText = slope ? 'Dashed: VPT2 at the origin, ω = ' + slope.omega.toFixed(1) + ' cm⁻¹ with slope 2x_ii/ω_i = ' + slope.slope.toExponential(3) +
      ' (x_ii = ' + slope.x.toFixed(3) + ' cm⁻¹, vibrational part); diamond: harmonic wavenumber.'
      : 'No VPT2 slope: ' + (data.anharmonicity ? 'the family spans a degenerate set.' : 'the anharmonic stage did not run.');
    return el('div', { className: 'split' }, [figure(byEnergy, 'backbone-' + f.family, slopeText + ' Vertical lines: events along the backbone.'),
      figure(byAmplitude, 'amplitude-' + f.family, 'Frequency against the largest displacement of an atom.')]);
  }

  function ladderTable(f) {
    var ladder = list(f.ladder);
    if (!ladder.length) return null;
    var fundamental = list(f.fundamentals)[0];
    var ground = ladder[0].energy_cm1;
    var rows = ladder.slice(1).map(function (rung) {
      var vpt2 = list(data.levels).find(function (l) {
        var q = list(l.quanta);
        return q.every(function (n, k) { return k + 1 === fundamental ? n === rung.n : n === 0; });
      });
      var semiclassical = rung.energy_cm1 - ground;
      var vpt2Value = vpt2 ? levelPosition(vpt2) : null;
      return [rung.n, fixed(semiclassical, 1), vpt2 ? vpt2.label : '—', fixed(vpt2Value, 1), isNumber(vpt2Value) ? fixed(semiclassical - vpt2Value, 1) : '—'];
    });
    return table(['n', 'ladder E_n − E_0 / cm⁻¹', 'VPT2 level', 'VPT2 / cm⁻¹', 'difference / cm⁻¹'], rows, { name: 'ladder-' + f.family });
  }

  function ladderPlot(f) {
    var ladder = list(f.ladder);
    if (ladder.length < 2) return null;
    var fundamental = list(f.fundamentals)[0];
    var rows = [];
    ladder.slice(1).forEach(function (rung) {
      rows.push({ n: rung.n, energy: rung.energy_cm1 - ladder[0].energy_cm1, source: 'semiclassical ladder' });
      var vpt2 = list(data.levels).find(function (l) { return list(l.quanta).every(function (n, k) { return k + 1 === fundamental ? n === rung.n : n === 0; }); });
      if (vpt2) rows.push({ n: rung.n, energy: levelPosition(vpt2), source: 'VPT2' });
    });
    var plot = Plot.plot({
      width: 520, height: 220, color: { domain: ['semiclassical ladder', 'VPT2'], range: ['#1f6f78', '#b5542c'], legend: true },
      x: { label: 'level / cm⁻¹', grid: true }, y: { label: 'n', domain: ladder.slice(1).map(function (r) { return r.n; }) },
      marks: [Plot.tickX(rows, { x: 'energy', y: 'n', stroke: 'source', strokeWidth: 2, className: 'mk-rung' })]
    });
    return figure(plot, 'ladder-' + f.family, 'Quantized orbits (E_n − E_0) against the VPT2 overtones nν of the same mode.');
  }

  // One viewer for every family's orbits (a page holds few WebGL contexts, and each one
  // animates in software where there is no GPU).
  function orbitViewer(families) {
    var orbits = list(data.family_orbits);
    if (!orbits.length) return el('p', { className: 'absent', text: 'No orbit animation in this document.' });
    var nameOf = {};
    families.forEach(function (f) { nameOf[f.family] = familyName(f); });
    var box = el('div', { className: 'viewer', 'data-viewer': 'orbit' });
    var caption = el('div', { className: 'viewer-caption' });
    var select = el('select', { 'aria-label': 'orbit' }, orbits.map(function (o, i) {
      return el('option', { value: String(i), text: (nameOf[o.family] || 'family ' + o.family) + ' at ' + fixed(o.energy_cm1, 0) + ' cm⁻¹' });
    }));
    var wrapper = el('div', { className: 'split' }, [el('div', {}, [el('p', {}, ['Periodic orbit: ', select]), caption]), box]);
    var viewer = null;
    function draw() {
      var o = orbits[Number(select.value)];
      if (!viewer) viewer = makeViewer(box);
      showFrames(viewer, o.frames_angstrom, 'family ' + o.family);
      caption.textContent = 'One period at ' + fixed(o.energy_cm1, 1) + ' cm⁻¹ above the minimum (asked: ' + fixed(o.requested_energy_cm1, 1) +
        (o.outside_backbone ? ', beyond the computed backbone, whose nearest end is drawn' : '') + '), frequency ' + fixed(o.frequency_cm1, 2) +
        ' cm⁻¹, period ' + fixed(o.period_fs, 2) + ' fs, largest atom amplitude ' + fixed(o.amplitude_angstrom, 3) +
        ' Å, closure after one period ' + (isNumber(o.closure_angstrom) ? o.closure_angstrom.toExponential(1) : '—') + ' Å. The same frames are in animations/family-' +
        String(o.family).padStart(2, '0') + '.xyz.';
    }
    select.addEventListener('change', draw);
    // Drawn once the box is laid out (the viewer sizes its canvas from it).
    setTimeout(draw, 0);
    return wrapper;
  }

  function buildFamilies(body) {
    var families = list(data.families);
    if (!families.length) return absent(body, 'No families: the families stage ' + (data.families_skipped ? 'was skipped: ' + data.families_skipped : 'did not run') + '.');
    var continued = families.filter(function (f) { return f.continued && list(f.points).length; });
    if (continued.length) body.appendChild(backboneOverview(continued));
    body.appendChild(el('h3', { text: 'Orbit animation' }));
    body.appendChild(orbitViewer(families));
    families.forEach(function (f) {
      var part = el('div', { className: 'family', 'data-family': String(f.family) }, [el('h3', { text: familyName(f) + ' — ' + (f.description || '') })]);
      part.appendChild(el('p', { className: 'note', text: 'status: ' + f.status + (f.message ? ' (' + f.message + ')' : '') + ', ' + list(f.points).length + ' orbits' }));
      body.appendChild(part);
      if (!f.continued || !list(f.points).length) return;
      part.appendChild(familyBackbone(f));
      part.appendChild(el('div', { className: 'split' }, [ladderPlot(f), ladderTable(f)]));
    });
  }

  // ---------- symmetry ----------
  function buildSymmetry(body) {
    var sym = data.symmetry;
    if (!sym) return absent(body, 'No symmetry information in this document.');
    body.appendChild(el('p', { text: 'Point group ' + (sym.display_name || sym.point_group) + ' (order ' + sym.order + '); Γvib = ' +
      (sym.vibrational_representation_display || sym.vibrational_representation || '—') + '; species ' + (sym.species_status || '') + '.' }));
    var table1 = table(['operation', 'class', 'proper', 'axis'], list(sym.operations).map(function (op) {
      return [op.display_name || op.name, op.class, op.proper ? 'yes' : 'no', list(op.axis).map(function (v) { return fixed(v, 3); }).join(', ')];
    }), { name: 'operations' });
    var ct = sym.character_table || {};
    var classes = list(ct.classes);
    var table2 = table(['species'].concat(classes.map(function (c) { return (c.size > 1 ? c.size : '') + (c.display_label || c.label); })).concat(['linear, rotations', 'quadratic']),
      list(ct.irreps).map(function (irrep) {
        return [irrep.display_label || irrep.label].concat(list(irrep.characters).map(function (c) { return fixed(Math.abs(c) < 5e-13 ? 0 : c, Number.isInteger(Math.round(c * 1000) / 1000) ? 0 : 3); }))
          .concat([list(irrep.linear_functions).concat(list(irrep.rotations)).join(', '), list(irrep.quadratic_functions).join(', ')]);
      }), { name: 'character-table' });
    body.appendChild(el('div', { className: 'split' }, [el('div', {}, [el('h3', { text: 'Operations' }), table1]), el('div', {}, [el('h3', { text: 'Character table' }), classes.length ? table2 : el('p', { className: 'absent', text: 'no character table for this group' })])]));
    list(sym.notes).forEach(function (n) { body.appendChild(el('p', { className: 'note', text: n })); });
  }

  root.appendChild(header());
  root.appendChild(nav);
  root.appendChild(main);
  var failures = [];
  [['summary', 'Summary', 'What was computed and how the run went.', buildSummary],
   ['modes', 'Modes', 'Harmonic normal modes; pick a row to animate it.', buildModes],
   ['levels', 'Levels and resonances', 'VPT2 fundamentals, overtones and combinations on one energy axis, with the polyads that mix them.', buildLevels],
   ['spectrum', 'Spectrum', 'Harmonic and anharmonic sticks with broadened curves' + (pageInfo.observed ? ', and the measured bands.' : '.'), buildSpectrum],
   ['families', 'Families', 'Periodic orbits continued from each mode: where the backbone follows the VPT2 slope and where it parts from it.', buildFamilies],
   ['symmetry', 'Symmetry', 'Operations, character table and Γvib.', buildSymmetry]].forEach(function (s) {
    try { section(s[0], s[1], s[2], s[3]); } catch (error) { failures.push(s[0] + ': ' + error.message); }
  });
  // Time from the start of navigation to a drawn page (tools/bench-report reads it).
  window.overtoneReport = { data: data, viewers: viewers, failures: failures, readyMs: performance.now() };
  if (failures.length) console.error('overtone report: sections failed: ' + failures.join('; '));
  document.body.setAttribute('data-ready', 'true');
})();

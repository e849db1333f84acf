// The draft page's placement editor: drag an antenna's marker on the top or side view, or focus it and use
// the arrow keys (1 mm, Shift 10 mm); R turns its polarization axis in the view's plane by 15° (Shift+R 90°), and
// so does dragging the dot at the end of its axis.
// Every mapping from drawing points to millimetres uses what the server drew with: each view's
// data-origin-pt (where 0 mm lies) and data-scale-pt-per-mm, in the view's own coordinates. What changes is
// written into the questionnaire's x/y/z fields, and a change event on them runs the section's ordinary
// versioned save, whose answer redraws the drawing and the checklist. Without this script the fields work alone.
(function () {
  "use strict";

  const DECIMALS_MM = 1;  // the fields take what a mechanical drawing gives: a tenth of a millimetre
  let focusAfterSwap = null;  // {antenna, view} of the marker to focus again once the save redraws the drawing
  let drag = null;

  function numbers(text) {
    return (text || "").trim().split(/\s+/).filter(Boolean).map(Number);
  }

  function viewOf(marker) {
    const svg = marker.closest("svg[data-placement-editor]");
    const view = svg && svg.querySelector('[data-view="' + marker.dataset.view + '"][data-scale-pt-per-mm]');
    if (!view) return null;
    return {svg: svg, group: view, origin: numbers(view.dataset.originPt),
            scale: Number(view.dataset.scalePtPerMm), axes: numbers(marker.dataset.axes)};
  }

  function field(marker, quantity, axis) {
    const name = "antennas[" + marker.dataset.antenna + "]." + quantity + "[" + axis + "]";
    return document.querySelector('input[name="' + CSS.escape(name) + '"]');
  }

  function readVector(marker, quantity, fallback) {
    const values = [0, 1, 2].map(function (axis) {
      const input = field(marker, quantity, axis);
      const value = input ? Number(String(input.value).replace(",", ".")) : NaN;
      return Number.isFinite(value) ? value : NaN;
    });
    return values.every(Number.isFinite) ? values : fallback;
  }

  function clamp(marker, position) {
    const bounds = numbers(marker.dataset.boundsMm);
    return position.map(function (value, axis) {
      return Math.min(bounds[axis + 3], Math.max(bounds[axis], value));
    });
  }

  function round(value, decimals) {
    const factor = Math.pow(10, decimals);
    return Math.round(value * factor) / factor + 0;
  }

  // Writes the values into the fields and fires one change (on the last field written), which the section's
  // htmx save listens for; the save sends the whole form, so every field changed goes in the same request.
  function write(marker, quantity, vector, decimals) {
    let last = null;
    vector.forEach(function (value, axis) {
      const input = field(marker, quantity, axis);
      if (!input) return;
      const text = String(round(value, decimals));
      if (input.value !== text) { input.value = text; last = input; }
    });
    if (last && quantity === "polarization") {
      // The axis is chosen in words on the form; a turned axis is "another direction", read from its x, y, z.
      const words = document.querySelector(
        'select[name="' + CSS.escape("antennas[" + marker.dataset.antenna + "].polarization.words") + '"]');
      if (words) words.value = "custom";
    }
    if (last) {
      focusAfterSwap = {antenna: marker.dataset.antenna, view: marker.dataset.view};
      last.dispatchEvent(new Event("change", {bubbles: true}));
    }
  }

  function positionOf(marker) {
    return readVector(marker, "position_mm", numbers(marker.dataset.positionMm));
  }

  // Drawing points of a pointer event, in the view's coordinates (the drawing is flipped and scaled to the page).
  function pointerPt(view, event) {
    const point = view.svg.createSVGPoint();
    point.x = event.clientX;
    point.y = event.clientY;
    return point.matrixTransform(view.group.getScreenCTM().inverse());
  }

  function pointerMm(view, event, position) {
    const point = pointerPt(view, event);
    const moved = position.slice();
    moved[view.axes[0]] = (point.x - view.origin[0]) / view.scale;
    moved[view.axes[1]] = (point.y - view.origin[1]) / view.scale;
    return moved;
  }

  function onPointerDown(event) {
    const marker = event.target.closest && event.target.closest('[data-part="marker"]');
    if (!marker || event.button !== 0) return;
    const view = viewOf(marker);
    const position = positionOf(marker);
    if (!view || position.length !== 3) return;
    event.preventDefault();
    marker.focus();
    const axis = readVector(marker, "polarization", numbers(marker.dataset.polarization));
    const turning = event.target.closest('[data-part="turn"]') !== null && axis.length === 3;
    drag = {marker: marker, view: view, position: position, axis: axis, turning: turning, moved: null};
    marker.setPointerCapture(event.pointerId);
  }

  // Dragging the turn handle (the dot at an axis's end) points the axis at the pointer, in 15° steps.
  function turnTo(event) {
    const view = drag.view;
    const point = pointerPt(view, event);
    const centreX = view.origin[0] + drag.position[view.axes[0]] * view.scale;
    const centreY = view.origin[1] + drag.position[view.axes[1]] * view.scale;
    if (Math.hypot(point.x - centreX, point.y - centreY) < 4) return;
    const degrees = Math.round(Math.atan2(point.y - centreY, point.x - centreX) * 180 / Math.PI / 15) * 15;
    const now = Math.atan2(drag.axis[view.axes[1]], drag.axis[view.axes[0]]) * 180 / Math.PI;
    const axisGroup = drag.marker.querySelector('[data-part="axis"]');
    if (axisGroup) axisGroup.setAttribute("transform", "rotate(" + (degrees - now) + " " + centreX + " " + centreY + ")");
    drag.moved = turned(drag.axis, view.axes, degrees - now);
  }

  function onPointerMove(event) {
    if (!drag) return;
    if (drag.turning) { turnTo(event); return; }
    const moved = clamp(drag.marker, pointerMm(drag.view, event, drag.position));
    const view = drag.view;
    const dx = (moved[view.axes[0]] - drag.position[view.axes[0]]) * view.scale;
    const dy = (moved[view.axes[1]] - drag.position[view.axes[1]]) * view.scale;
    drag.marker.setAttribute("transform", "translate(" + dx + " " + dy + ")");
    drag.moved = moved;
  }

  function onPointerUp() {
    if (!drag) return;
    const done = drag;
    drag = null;
    if (done.moved && done.turning) write(done.marker, "polarization", done.moved, 4);
    else if (done.moved) write(done.marker, "position_mm", done.moved, DECIMALS_MM);
  }

  function turned(vector, axes, degrees) {
    const turnedVector = vector.slice();
    const across = vector[axes[0]], up = vector[axes[1]];
    if (Math.hypot(across, up) < 1e-9) {  // pointing out of the view: start it along the view's first axis
      turnedVector[axes[0]] = 1;
      turnedVector[3 - axes[0] - axes[1]] = 0;
      return turnedVector;
    }
    const angle = degrees * Math.PI / 180;
    turnedVector[axes[0]] = across * Math.cos(angle) - up * Math.sin(angle);
    turnedVector[axes[1]] = across * Math.sin(angle) + up * Math.cos(angle);
    return turnedVector;
  }

  function onKeyDown(event) {
    const marker = event.target.closest && event.target.closest('[data-part="marker"]');
    if (!marker || event.altKey || event.ctrlKey || event.metaKey) return;
    const axes = numbers(marker.dataset.axes);
    const step = event.shiftKey ? 10 : 1;
    const moves = {ArrowLeft: [axes[0], -step], ArrowRight: [axes[0], step],
                   ArrowUp: [axes[1], step], ArrowDown: [axes[1], -step]};
    if (moves[event.key]) {
      const position = positionOf(marker);
      if (position.length !== 3) return;
      event.preventDefault();
      position[moves[event.key][0]] += moves[event.key][1];
      write(marker, "position_mm", clamp(marker, position), DECIMALS_MM);
    } else if (event.key === "r" || event.key === "R") {
      const axis = readVector(marker, "polarization", numbers(marker.dataset.polarization));
      if (axis.length !== 3) return;
      event.preventDefault();
      write(marker, "polarization", turned(axis, axes, event.shiftKey ? 90 : 15), 4);
    }
  }

  // The save's answer swaps the drawing out: the marker that was moved takes the focus again.
  function onSettle() {
    if (!focusAfterSwap) return;
    const marker = document.querySelector('[data-part="marker"][data-antenna="' + focusAfterSwap.antenna +
                                          '"][data-view="' + focusAfterSwap.view + '"]');
    if (marker && (document.activeElement === document.body || !document.activeElement ||
                   !document.contains(document.activeElement))) {
      marker.focus();
    }
  }

  document.addEventListener("pointerdown", onPointerDown);
  document.addEventListener("pointermove", onPointerMove);
  document.addEventListener("pointerup", onPointerUp);
  document.addEventListener("pointercancel", onPointerUp);
  document.addEventListener("keydown", onKeyDown);
  document.addEventListener("htmx:afterSettle", onSettle);
})();

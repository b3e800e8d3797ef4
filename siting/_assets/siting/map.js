/* siting's own script for map.html (not vendored: written for siting, MIT like the rest).
 *
 * - sitingMap.labels(map, group, kind, items): permanent labels (Leaflet DivIcon markers, not
 *   interactive) that make room for each other. After every move or zoom and whenever a layer is
 *   switched on or off, labels are laid out in order of importance (kind, then the order given);
 *   one that would cover a label already placed is hidden, or, for source ids, joined to it
 *   ("H1, H2"); a kind has a least zoom below which its labels are hidden. Each item is
 *   [lat, lon, html, css class or ""] or, for a label that may move along its line (a
 *   contour's value), [lat, lon, html, css class, [[lat, lon], ...]] with other places, best
 *   first: it goes to the first that is on screen and clear of the page's boxes. The html is
 *   text siting has already escaped.
 * - Popups keep clear of the title block: Leaflet's auto-pan keeps every popup below the
 *   block's bottom edge, and a popup taller than the room left scrolls.
 * - On a small screen the legend and the title block's cautions list start folded (their
 *   headings stay visible and open them).
 * - sitingMap.fit(map, bounds): the opening view, fitted to the data in the room the title
 *   block (top left) and the legend (bottom left) leave free, as they are on this screen.
 *
 * Uses Leaflet 1.9 only; fetches nothing.
 */
(function () {
  "use strict";

  // kind: [importance (higher laid out first), join colliding labels, least zoom shown]
  var KINDS = {
    rank: [7, false, 0],
    site: [6, false, 0],
    source: [5, true, 13],
    farm: [4, false, 13],
    contour: [3, false, 0],
    context: [2, false, 15],
    exclusion: [1, false, 14]
  };
  // how far right of its point a label of these kinds starts [px] (the others are centred on
  // it); the same as the page's style sheet (webmap.py, .siting-label-<kind>)
  var SHIFT_RIGHT_PX = { source: 8, exclusion: 8, farm: 7 };
  var SMALL_SCREEN = "(max-width: 700px), (max-height: 560px)";
  var GAP_PX = 2; // labels closer than this count as touching
  var BUCKET_PX = 64; // cell of the spatial hash used to find colliding labels
  var JOIN_NEAR_PX = 60; // a hidden source id joins a kept one this near

  var registry = []; // {map, marker, kind, html, order, places}
  var fixed = []; // {map, group, latlng, r}: markers labels must keep clear of
  var watched = [];

  function kindOf(kind) {
    return KINDS[kind] || [0, false, 0];
  }

  function overlaps(a, b) {
    return (
      a.left < b.right + GAP_PX &&
      b.left < a.right + GAP_PX &&
      a.top < b.bottom + GAP_PX &&
      b.top < a.bottom + GAP_PX
    );
  }

  function buckets(box) {
    var keys = [];
    var x0 = Math.floor(box.left / BUCKET_PX), x1 = Math.floor(box.right / BUCKET_PX);
    var y0 = Math.floor(box.top / BUCKET_PX), y1 = Math.floor(box.bottom / BUCKET_PX);
    for (var x = x0; x <= x1; x++) {
      for (var y = y0; y <= y1; y++) {
        keys.push(x + ":" + y);
      }
    }
    return keys;
  }

  function boxAt(map, l, latlng, w, h) {
    // where the label's text is drawn with its point at latlng, in map container pixels
    var p = map.latLngToContainerPoint(latlng);
    var shift = SHIFT_RIGHT_PX[l.kind];
    var left = shift === undefined ? p.x - w / 2 : p.x + shift;
    return { left: left, right: left + w, top: p.y - h / 2, bottom: p.y + h / 2 };
  }

  function blocksOf(map) {
    // the page's boxes (title block, legend, north arrow, Leaflet's controls) in map pixels
    var frame = map.getContainer().getBoundingClientRect();
    return Array.prototype.map.call(
      document.querySelectorAll(".siting-box, .leaflet-control"),
      function (e) {
        var r = e.getBoundingClientRect();
        return {
          left: r.left - frame.left, right: r.right - frame.left,
          top: r.top - frame.top, bottom: r.bottom - frame.top
        };
      }
    );
  }

  function layout(map) {
    var zoom = map.getZoom();
    var size = map.getSize();
    var labels = registry.filter(function (l) {
      return l.map === map && map.hasLayer(l.marker) && l.marker.getElement();
    });
    labels.sort(function (a, b) {
      return kindOf(b.kind)[0] - kindOf(a.kind)[0] || a.order - b.order;
    });
    // 1. reset every label (writes only) ...
    labels.forEach(function (l) {
      var element = l.marker.getElement();
      element.firstChild.innerHTML = l.html;
      element.classList.remove("siting-label-hidden");
    });
    // 2. ... read every size in one layout pass, and place the boxes where Leaflet puts the
    // labels' points (not where they are drawn this instant: markers may still be gliding
    // after a zoom); a label that may move gets each of its places that is on screen and
    // clear of the page's boxes ...
    var blocks = blocksOf(map);
    var onScreen = function (box) {
      return box.left >= 0 && box.top >= 0 && box.right <= size.x && box.bottom <= size.y;
    };
    var options = labels.map(function (l) {
      var text = l.marker.getElement().firstChild;
      var w = text.offsetWidth, h = text.offsetHeight;
      if (!l.places) {
        return [[l.marker.getLatLng(), boxAt(map, l, l.marker.getLatLng(), w, h)]];
      }
      var free = [];
      l.places.forEach(function (place) {
        var box = boxAt(map, l, place, w, h);
        if (onScreen(box) && !blocks.some(function (b) { return overlaps(b, box); })) {
          free.push([place, box]);
        }
      });
      return free.length ? free : [[l.places[0], boxAt(map, l, l.places[0], w, h)]];
    });
    // 3. ... place them in order of importance, in memory, clear of the fixed markers ...
    var hash = {};
    var boxes = [];
    var kept = {}; // indices of the labels placed
    var n = labels.length; // boxes 0 .. n-1 are the labels', n and above the fixed markers'
    fixed.forEach(function (f) {
      if (f.map !== map || !map.hasLayer(f.group)) {
        return;
      }
      var p = map.latLngToContainerPoint(f.latlng);
      var j = Math.max(n, boxes.length);
      boxes[j] = { left: p.x - f.r, right: p.x + f.r, top: p.y - f.r, bottom: p.y + f.r };
      buckets(boxes[j]).forEach(function (key) {
        (hash[key] = hash[key] || []).push(j);
      });
    });
    var hidden = [];
    var moved = [];
    var joined = []; // [kept label index, joined label]
    var collides = function (box) {
      var hit = -1;
      buckets(box).some(function (key) {
        return (hash[key] || []).some(function (j) {
          if (overlaps(boxes[j], box)) {
            hit = j;
            return true;
          }
          return false;
        });
      });
      return hit;
    };
    labels.forEach(function (l, i) {
      boxes[i] = options[i][0][1];
      if (zoom < kindOf(l.kind)[2]) {
        hidden.push(l);
        return;
      }
      var box = boxes[i];
      var outside = box.right < 0 || box.left > size.x || box.bottom < 0 || box.top > size.y;
      if (outside) {
        return; // off screen: left as it is, laid out again when the map moves
      }
      var hit = collides(box);
      for (var k = 1; hit >= 0 && k < options[i].length; k++) {
        var other = collides(options[i][k][1]);
        if (other < 0) {
          boxes[i] = options[i][k][1];
          hit = -1;
        }
      }
      if (hit < 0) {
        if (l.places) {
          moved.push([l, options[i].filter(function (o) { return o[1] === boxes[i]; })[0][0]]);
        }
        buckets(boxes[i]).forEach(function (key) {
          (hash[key] = hash[key] || []).push(i);
        });
        kept[i] = true;
        return;
      }
      if (kindOf(l.kind)[1] && hit < n && labels[hit].kind === l.kind) {
        joined.push([hit, l]);
        // the kept label grows by ", " and this text: later labels must clear that too
        boxes[hit].right += box.right - box.left + 6;
        buckets(boxes[hit]).forEach(function (key) {
          var cell = (hash[key] = hash[key] || []);
          if (cell.indexOf(hit) < 0) {
            cell.push(hit);
          }
        });
      }
      hidden.push(l);
    });
    // ... a joinable label hidden by another kind's joins a kept one of its kind nearby ...
    hidden.forEach(function (l) {
      var i = labels.indexOf(l);
      if (!kindOf(l.kind)[1] || zoom < kindOf(l.kind)[2] || joined.some(function (p) {
        return p[1] === l;
      })) {
        return;
      }
      var near = -1, nearest = JOIN_NEAR_PX;
      labels.forEach(function (k, j) {
        if (k.kind !== l.kind || !kept[j]) {
          return;
        }
        var d = Math.hypot(boxes[j].left - boxes[i].left, boxes[j].top - boxes[i].top);
        if (d < nearest) {
          near = j;
          nearest = d;
        }
      });
      if (near >= 0) {
        joined.push([near, l]);
      }
    });
    // 4. ... then write the result.
    moved.forEach(function (pair) {
      pair[0].marker.setLatLng(pair[1]);
    });
    hidden.forEach(function (l) {
      l.marker.getElement().classList.add("siting-label-hidden");
    });
    var members = {};
    joined.forEach(function (pair) {
      (members[pair[0]] = members[pair[0]] || [labels[pair[0]]]).push(pair[1]);
    });
    Object.keys(members).forEach(function (j) {
      var group = members[j].sort(function (a, b) { return a.order - b.order; });
      labels[j].marker.getElement().firstChild.innerHTML = group.map(function (l) {
        return l.html;
      }).join(", ");
    });
    // how many layouts so far: a hook for the browser tests (tests/test_browser.py)
    var container = map.getContainer();
    container.dataset.sitingLayouts = String(Number(container.dataset.sitingLayouts || 0) + 1);
  }

  function watch(map) {
    if (watched.indexOf(map) >= 0) {
      return;
    }
    watched.push(map);
    var pending = null;
    var zooming = false; // labels move while a zoom animates: lay out once it has ended
    var later = function () {
      if (pending === null) {
        pending = window.setTimeout(function () {
          pending = null;
          if (!zooming) {
            layout(map);
          }
        }, 0);
      }
    };
    map.on("zoomstart", function () {
      zooming = true;
    });
    map.on("zoomend", function () {
      zooming = false;
      later();
    });
    map.on("moveend overlayadd overlayremove resize", later);
    map.whenReady(later);
  }

  function labels(map, group, kind, items) {
    items.forEach(function (item) {
      var css = "siting-label siting-label-" + kind + (item[3] ? " " + item[3] : "");
      var marker = L.marker([item[0], item[1]], {
        icon: L.divIcon({
          className: css,
          html: '<span class="siting-label-text"></span>',
          iconSize: null
        }),
        interactive: false,
        keyboard: false
      });
      registry.push({
        map: map, marker: marker, kind: kind, html: item[2], order: registry.length,
        places: item[4] ? item[4].map(function (p) { return L.latLng(p[0], p[1]); }) : null
      });
      marker.addTo(group);
    });
    watch(map);
  }

  function obstacles(map, group, items) {
    // items: [lat, lon, radius px] of markers (the numbered positions) labels keep clear of
    items.forEach(function (item) {
      fixed.push({ map: map, group: group, latlng: L.latLng(item[0], item[1]), r: item[2] });
    });
    watch(map);
  }

  // --- popups clear of the title block ---------------------------------------------------
  function titleBottom() {
    var title = document.querySelector(".siting-title");
    return title ? Math.max(0, title.getBoundingClientRect().bottom) : 0;
  }

  // Popup options read when a popup opens: the room below the title block. Not enumerable, so
  // Leaflet's copies of a popup's options leave them to the prototype; a value given for a
  // popup of its own is kept as that popup's own.
  function measured(name, value) {
    Object.defineProperty(L.Popup.prototype.options, name, {
      configurable: true,
      enumerable: false,
      get: value,
      set: function (own) {
        Object.defineProperty(this, name, {
          value: own, writable: true, configurable: true, enumerable: true
        });
      }
    });
  }
  if (window.L && L.Popup) {
    measured("autoPanPaddingTopLeft", function () {
      return L.point(10, titleBottom() + 10);
    });
    measured("maxHeight", function () {
      return Math.max(120, window.innerHeight - titleBottom() - 60);
    });
  }

  // --- small screens: fold the legend and the cautions list ------------------------------
  function foldOnSmallScreens() {
    if (!(window.matchMedia && window.matchMedia(SMALL_SCREEN).matches)) {
      return;
    }
    document.querySelectorAll("details.siting-fold-small").forEach(function (d) {
      d.open = false;
    });
  }
  var folded = false;
  function foldOnce() {
    if (!folded) {
      folded = true;
      foldOnSmallScreens();
    }
  }
  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", foldOnce);
  } else {
    foldOnce();
  }

  // --- the opening view ----------------------------------------------------------------
  function fit(map, bounds) {
    foldOnce(); // the boxes as they will stay, before they are measured
    var frame = map.getContainer().getBoundingClientRect();
    var size = map.getSize();
    var edge = function (selector, side) {
      var e = document.querySelector(selector);
      if (!e) {
        return side === "left" || side === "top" ? Infinity : 0;
      }
      var r = e.getBoundingClientRect();
      return {
        left: r.left - frame.left, right: r.right - frame.left,
        top: r.top - frame.top, bottom: r.bottom - frame.top
      }[side];
    };
    var legendRight = edge(".siting-legend", "right");
    var titleRight = edge(".siting-title", "right");
    var titleBottom = edge(".siting-title", "bottom");
    var listLeft = edge(".leaflet-control-layers", "left");
    var listBottom = edge(".leaflet-control-layers", "bottom");
    var side = Math.max(legendRight, titleRight);
    // rooms the boxes leave free, as [left, top, right, bottom] padding: below the title
    // block and right of the legend; right of both, below the layer list; between them
    var rooms = [
      [legendRight, titleBottom, 0, 0],
      [side, listBottom, 0, 0],
      [side, 0, listLeft === Infinity ? 0 : size.x - listLeft, 0]
    ];
    var best = null;
    rooms.forEach(function (room) {
      var pad = room.map(function (v) { return Math.max(10, v + 10); });
      if (pad[0] + pad[2] > 0.6 * size.x || pad[1] + pad[3] > 0.6 * size.y) {
        return; // never less than 40 % of the map for the data
      }
      var zoom = map.getBoundsZoom(bounds, false, L.point(pad[0] + pad[2], pad[1] + pad[3]));
      if (best === null || zoom > best.zoom) {
        best = { zoom: zoom, pad: pad };
      }
    });
    var pad = best ? best.pad : [10, 10, 10, 10];
    map.fitBounds(bounds, {
      paddingTopLeft: [pad[0], pad[1]],
      paddingBottomRight: [pad[2], pad[3]],
      animate: false // the page opens on its view, with no zoom gliding in
    });
  }

  window.sitingMap = { labels: labels, obstacles: obstacles, layout: layout, fit: fit };
})();

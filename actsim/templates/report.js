(function () {
  function count() {
    var imgs = document.images, n = 0;
    for (var i = 0; i < imgs.length; i++) { if (imgs[i].complete && imgs[i].naturalWidth > 0) { n++; } }
    document.body.dataset.imagesLoaded = String(n);
    document.body.dataset.imagesTotal = String(imgs.length);
    // widths of the page and of the window (a browser test checks that nothing is wider than the window)
    document.body.dataset.scrollWidth = String(document.documentElement.scrollWidth);
    document.body.dataset.clientWidth = String(document.documentElement.clientWidth);
  }
  count();
  window.addEventListener("load", count);
  window.addEventListener("beforeprint", function () {
    var d = document.querySelectorAll("details");
    for (var i = 0; i < d.length; i++) { d[i].open = true; }
  });
})();

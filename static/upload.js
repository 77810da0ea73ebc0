// Upload progress for the import form. The form is sent with XMLHttpRequest so that the share of the file
// already sent can be shown; the answer (the preview page) then replaces the page. Without JavaScript the
// form posts as usual and nothing is lost.
document.addEventListener("DOMContentLoaded", function () {
  var form = document.querySelector('form.edit[enctype="multipart/form-data"]');
  if (!form || !window.XMLHttpRequest || !window.FormData) {
    return;
  }
  form.addEventListener("submit", function (ev) {
    ev.preventDefault();
    var box = document.createElement("p");
    box.className = "upload-progress";
    var bar = document.createElement("progress");
    bar.id = "upload-progress";
    bar.max = 100;
    bar.value = 0;
    var label = document.createElement("span");
    label.textContent = " sending the file…";
    box.appendChild(bar);
    box.appendChild(label);
    form.appendChild(box);
    var xhr = new XMLHttpRequest();
    xhr.open("POST", form.action);
    xhr.upload.onprogress = function (e) {
      if (e.lengthComputable) {
        bar.value = (100 * e.loaded) / e.total;
        label.textContent = " " + Math.round(bar.value) + " % of " + Math.round(e.total / 1024) + " KiB sent";
      }
    };
    xhr.upload.onload = function () {
      bar.removeAttribute("value");
      label.textContent = " sent; every row is being checked…";
    };
    xhr.onload = function () {
      // Answered with a redirect (a paper's table goes on to the mapping of its columns): go to that page,
      // so the address shown is the page's own.
      if (xhr.responseURL && new URL(xhr.responseURL).pathname !== new URL(form.action, location.href).pathname) {
        location.assign(xhr.responseURL);
        return;
      }
      document.open();
      document.write(xhr.responseText);
      document.close();
    };
    xhr.onerror = function () {
      label.textContent = " the upload failed (connection lost); nothing was imported. Try again.";
    };
    xhr.send(new FormData(form));
  });
});

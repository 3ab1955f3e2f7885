// Forms that filter a screen (method GET) leave their empty fields out of the address, so a
// link holds only the choices made (the server drops them too, for a browser without scripts).

for (const form of document.querySelectorAll("form[method=get]")) {
  form.addEventListener("submit", () => {
    for (const field of form.querySelectorAll("input[name], select[name], textarea[name]")) {
      if (field.type === "checkbox" || field.type === "radio") continue;
      if (field.value === "") field.disabled = true; // a disabled field is not submitted
    }
    // after the browser has read the form, enable the fields again (for the back button)
    setTimeout(() => {
      for (const field of form.querySelectorAll("[disabled]")) field.disabled = false;
    }, 0);
  });
}

;;; regvet-eglot.el --- run regvet's language server through eglot  -*- lexical-binding: t -*-

;; Load from your init file: (load "/path/to/regvet-eglot.el")
;; Emacs 29+ has eglot built in; Emacs 28 needs the eglot package (Debian: elpa-eglot).
;; eglot runs ONE server per major mode, so Python buffers get regvet instead of
;; pylsp/pyright while this is active.  To keep your Python server and add regvet's findings
;; beside it, load regvet-flymake.el instead (the recommended setup).

;;; Code:

(require 'eglot)

(add-to-list 'eglot-server-programs
             '((python-mode python-ts-mode) . ("regvet" "serve")))

;; Settings: regvet reads the project's [tool.regvet]; this file sets no eglot workspace
;; configuration of its own, so yours stays as it is. To send regvet editor settings, add a
;; `:regvet' section to your own `eglot-workspace-configuration', e.g. (:regvet (:debounceMs 300)).

;; Start regvet when a Python file is opened:
(add-hook 'python-mode-hook #'eglot-ensure)
(when (fboundp 'python-ts-mode)
  (add-hook 'python-ts-mode-hook #'eglot-ensure))

(provide 'regvet-eglot)
;;; regvet-eglot.el ends here

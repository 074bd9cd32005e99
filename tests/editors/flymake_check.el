;;; flymake_check.el --- headless check of editor_configs/emacs/regvet-flymake.el  -*- lexical-binding: t -*-
;; emacs -Q --batch -l tests/editors/flymake_check.el   (tests/test_editors.py runs it)
;; Environment: REGVET_CONFIG (the .el to load), REGVET_EXE (the regvet command), REGVET_FILE,
;; REGVET_OUT (report file).
(dolist (d (file-expand-wildcards "/usr/share/emacs/site-lisp/elpa/*"))
  (add-to-list 'load-path d))
(require 'flymake)

(defvar regvet-out (getenv "REGVET_OUT"))
(defun regvet-say (&rest parts)
  (write-region (concat (mapconcat (lambda (p) (format "%s" p)) parts " ") "\n") nil regvet-out t 'silent))

;; The user's own setup, which loading regvet's file must leave alone.
(defvar regvet-user-config '(:pylsp (:plugins (:ruff (:enabled t)))))
(setq-default eglot-workspace-configuration regvet-user-config)
(defun regvet-test-user-backend (report-fn &rest _)
  "Stands in for the user's language server: one note on line 1."
  (funcall report-fn (list (flymake-make-diagnostic (current-buffer) (point-min) (1+ (point-min)) :note "user: hello"))))
(add-hook 'python-mode-hook (lambda () (add-hook 'flymake-diagnostic-functions #'regvet-test-user-backend nil t)))

(condition-case err
    (progn
      (load (getenv "REGVET_CONFIG") nil t)
      (setq regvet-executable (getenv "REGVET_EXE"))
      (regvet-say "CONFIG-KEPT" (equal (default-value 'eglot-workspace-configuration) regvet-user-config))
      (find-file (getenv "REGVET_FILE"))
      (python-mode)
      (regvet-say "BACKENDS" (if (memq 'regvet-flymake flymake-diagnostic-functions) "regvet" "-")
                  (if (memq 'regvet-test-user-backend flymake-diagnostic-functions) "user" "-"))
      (flymake-start)
      (let ((deadline (+ (float-time) 60)))
        (while (and (< (float-time) deadline)
                    (not (cl-some (lambda (d) (string-prefix-p "no-" (flymake-diagnostic-text d)))
                                  (flymake-diagnostics))))
          (accept-process-output nil 0.1)))
      (dolist (d (sort (flymake-diagnostics) (lambda (a b) (< (flymake-diagnostic-beg a) (flymake-diagnostic-beg b)))))
        (regvet-say "DIAG" (line-number-at-pos (flymake-diagnostic-beg d)) (flymake-diagnostic-type d)
                    (car (split-string (flymake-diagnostic-text d) ":"))))
      (regvet-say "DONE"))
  (error (regvet-say "ERROR" (error-message-string err))))
(kill-emacs 0)

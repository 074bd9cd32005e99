;;; regvet-flymake.el --- regvet's findings in Python buffers, beside your own language server  -*- lexical-binding: t -*-

;; Load from your init file: (load "/path/to/regvet-flymake.el")
;;
;; regvet runs as one more Flymake backend: `regvet check --format lines -' reads the buffer on
;; standard input (so unsaved edits count) and its findings join those of any other backend.
;; Your Python language server (eglot with pylsp, pyright, ...) keeps running as before, and no
;; eglot setting is touched: regvet reads the project's own [tool.regvet] configuration, found
;; from the buffer's folder.  Nothing runs your code.

;;; Code:

(require 'flymake)

(defgroup regvet nil
  "Missing specification checks around statsmodels OLS fits."
  :group 'tools)

(defcustom regvet-executable "regvet"
  "The regvet command (a full path, or a name on `exec-path')."
  :type 'string)

(defcustom regvet-extra-arguments nil
  "More arguments for `regvet check', e.g. (\"--skip\" \"no-serial-test\")."
  :type '(repeat string))

(defvar-local regvet--process nil
  "The check running for this buffer, if any.")

(defconst regvet--line-regexp
  "^<stdin>:\\([0-9]+\\):\\([0-9]+\\): \\(error\\|warning\\|info\\) \\([a-z0-9-]+\\) \\(.*\\)$"
  "One finding of `regvet check --format lines' on standard input.")

(defun regvet--diagnostics (source output)
  "The Flymake diagnostics for buffer SOURCE in regvet's OUTPUT buffer."
  (let (diags)
    (with-current-buffer output
      (goto-char (point-min))
      (while (re-search-forward regvet--line-regexp nil t)
        (let* ((line (string-to-number (match-string 1)))
               (col (string-to-number (match-string 2)))
               (type (pcase (match-string 3) ("error" :error) ("warning" :warning) (_ :note)))
               (text (format "%s: %s" (match-string 4) (match-string 5)))
               (region (flymake-diag-region source line col)))
          (when region
            (push (flymake-make-diagnostic source (car region) (cdr region) type text) diags)))))
    (nreverse diags)))

(defun regvet-flymake (report-fn &rest _args)
  "A Flymake backend: run `regvet check' on the buffer and REPORT-FN its findings."
  (unless (executable-find regvet-executable)
    (error "Cannot find the regvet command `%s'" regvet-executable))
  (when (process-live-p regvet--process)
    (kill-process regvet--process))
  (let ((source (current-buffer))
        (output (generate-new-buffer " *regvet-flymake*")))
    (setq regvet--process
          (make-process
           :name "regvet-flymake" :noquery t :connection-type 'pipe :buffer output
           :command (append (list regvet-executable "check" "--format" "lines" "--no-baseline")
                            regvet-extra-arguments (list "-"))
           :stderr (get-buffer-create " *regvet-flymake-stderr*")
           :sentinel
           (lambda (proc _event)
             (when (memq (process-status proc) '(exit signal))
               (unwind-protect
                   (when (and (buffer-live-p source)
                              (eq proc (buffer-local-value 'regvet--process source)))
                     ;; exit 0: no findings, 1: findings; 2 and 3 are regvet's own errors
                     (if (memq (process-exit-status proc) '(0 1))
                         (funcall report-fn (regvet--diagnostics source output))
                       (funcall report-fn :panic
                                :explanation (format "regvet exited with %s" (process-exit-status proc)))))
                 (kill-buffer output))))))
    (save-restriction
      (widen)
      (process-send-region regvet--process (point-min) (point-max)))
    (process-send-eof regvet--process)))

(defun regvet-flymake-setup ()
  "Add regvet to this buffer's Flymake backends (beside any others) and turn Flymake on."
  (add-hook 'flymake-diagnostic-functions #'regvet-flymake nil t)
  (flymake-mode 1))

;; Python buffers get regvet; a language server that manages the buffer later (eglot) keeps its own
;; backend, and regvet is added back after it in case it replaced the list.
(add-hook 'python-mode-hook #'regvet-flymake-setup)
(when (fboundp 'python-ts-mode)
  (add-hook 'python-ts-mode-hook #'regvet-flymake-setup))
(with-eval-after-load 'eglot
  (add-hook 'eglot-managed-mode-hook
            (lambda ()
              (when (derived-mode-p 'python-mode 'python-ts-mode)
                (add-hook 'flymake-diagnostic-functions #'regvet-flymake nil t)))))

(provide 'regvet-flymake)
;;; regvet-flymake.el ends here

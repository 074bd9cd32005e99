;;; eglot_check.el --- headless eglot client for regvet's language server  -*- lexical-binding: t -*-
;; emacs -Q --batch -l tests/editors/eglot_check.el   (tests/test_editors.py runs it)
;; Environment: REGVET_SERVER_CMD (JSON list), REGVET_FILE, REGVET_OUT (report file),
;; REGVET_SETTINGS (JSON object for the `regvet' section), REGVET_WAIT_MS, REGVET_EXPECT.
;; Debian installs elpa-* packages outside the -Q load-path:
(dolist (d (file-expand-wildcards "/usr/share/emacs/site-lisp/elpa/*"))
  (add-to-list 'load-path d))
(require 'eglot)
(require 'json)

(defvar regvet-out (getenv "REGVET_OUT"))
(defun regvet-say (&rest parts)
  (let ((inhibit-message t))
    (write-region (concat (mapconcat (lambda (p) (format "%s" p)) parts " ") "\n")
                  nil regvet-out t 'silent)))

(defun regvet-wait (pred seconds)
  "Spin the event loop until PRED is true or SECONDS pass; return PRED's value."
  (let ((deadline (+ (float-time) seconds)) value)
    (while (and (not (setq value (funcall pred))) (< (float-time) deadline))
      (accept-process-output nil 0.05))
    value))

(defun regvet-dump (label)
  ;; `eglot--diagnostics' holds what the server last published for this buffer.
  (let ((diags (sort (copy-sequence eglot--diagnostics)
                     (lambda (a b) (< (flymake-diagnostic-beg a) (flymake-diagnostic-beg b))))))
    (regvet-say label (length diags))
    (dolist (d diags)
      (let* ((lsp (alist-get 'eglot-lsp-diag (flymake-diagnostic-data d)))
             (beg (flymake-diagnostic-beg d)))
        (regvet-say "DIAG"
                    (format "%d:%d" (line-number-at-pos beg)
                            (1+ (save-excursion (goto-char beg) (current-column))))
                    (flymake-diagnostic-type d)
                    (plist-get lsp :source) (plist-get lsp :code))))))

;; The JSON-RPC traffic and the server's stderr, for the test to show when it fails.
(defun regvet-save-logs ()
  (let ((server (eglot-current-server))
        (dir (expand-file-name "eglot" (getenv "HOME"))))
    (make-directory dir t)
    (when server
      (dolist (log `(("events.log" . ,(jsonrpc-events-buffer server))
                     ("stderr.log" . ,(jsonrpc-stderr-buffer server))))
        (when (buffer-live-p (cdr log))
          (with-current-buffer (cdr log)
            (write-region nil nil (expand-file-name (car log) dir) nil 'silent)))))))

(condition-case err
    (let* ((cmd (append (json-parse-string (getenv "REGVET_SERVER_CMD")) nil))
           (settings (json-parse-string (or (getenv "REGVET_SETTINGS") "{}") :object-type 'plist))
           (wait (/ (string-to-number (or (getenv "REGVET_WAIT_MS") "30000")) 1000.0))
           (expect (string-to-number (or (getenv "REGVET_EXPECT") "1"))))
      (setq eglot-server-programs `((python-mode . ,cmd)))
      ;; answered to workspace/configuration and sent in didChangeConfiguration
      (setq-default eglot-workspace-configuration `(:regvet ,settings))
      (find-file (getenv "REGVET_FILE"))
      (python-mode)
      ;; eglot-ensure waits for post-command-hook, which batch mode never runs
      (apply #'eglot (eglot--guess-contact))
      (regvet-say "server" (and (eglot-current-server)
                                (plist-get (eglot--server-info (eglot-current-server)) :name)))
      (regvet-say "opened" (and (regvet-wait (lambda () (>= (length eglot--diagnostics) expect)) wait) t))
      (regvet-dump "before")
      (goto-char (point-min))
      (forward-line 1)
      (insert "from statsmodels.stats.diagnostic import het_breuschpagan, linear_reset\n")
      (goto-char (point-max))
      (insert "linear_reset(res, power=3, use_f=True)\nhet_breuschpagan(res.resid, res.model.exog)\n")
      ;; eglot sends changes from an idle timer; batch mode is never idle, so send now
      (eglot--signal-textDocument/didChange)
      (regvet-say "cleared" (and (regvet-wait (lambda () (null eglot--diagnostics)) wait) t))
      (regvet-wait (lambda () nil) 1.0)   ; a late stale publish would show up here
      (regvet-dump "after")
      (regvet-say "alive" (and (eglot-current-server)
                               (process-live-p (jsonrpc--process (eglot-current-server))) t))
      (regvet-save-logs)
      (ignore-errors (eglot-shutdown (eglot-current-server)))
      (kill-emacs 0))
  (error (regvet-say "LISP-ERROR" (error-message-string err))
         (ignore-errors (regvet-save-logs))
         (kill-emacs 1)))

"""A headless LibreOffice for tests: a fresh profile, the extension installed
with unopkg (as an unprivileged user when run as root, since unopkg refuses
root without --shared), soffice listening on a pipe, and a UNO connection
from Debian's /usr/bin/python3. Host facts: docs/sheet-functions.md."""
import os
import shutil
import signal
import subprocess
import tempfile
import time

import uno
from com.sun.star.beans import PropertyValue

NOBODY = 65534


def _prop(name, value):
    p = PropertyValue()
    p.Name, p.Value = name, value
    return p


class CalcSession(object):
    def __init__(self, oxt=None):
        self.work = tempfile.mkdtemp(prefix="ellipsa-calc-")
        self.profile = os.path.join(self.work, "profile")
        os.makedirs(self.profile)
        if oxt:
            self.install(oxt)
        self.pipe = "ellipsa_test_%d" % os.getpid()
        self.proc = subprocess.Popen(
            ["soffice", "--headless", "--invisible", "--norestore", "--nologo", "--nodefault", "--nolockcheck",
             "-env:UserInstallation=" + uno.systemPathToFileUrl(self.profile),
             "--accept=pipe,name=%s;urp;StarOffice.ComponentContext" % self.pipe],
            stdout=subprocess.DEVNULL, stderr=open(os.path.join(self.work, "soffice.err"), "w"),
            start_new_session=True)
        local = uno.getComponentContext()
        resolver = local.ServiceManager.createInstanceWithContext("com.sun.star.bridge.UnoUrlResolver", local)
        deadline = time.monotonic() + 60
        while True:
            try:
                self.ctx = resolver.resolve("uno:pipe,name=%s;urp;StarOffice.ComponentContext" % self.pipe)
                break
            except Exception:
                if time.monotonic() > deadline or self.proc.poll() is not None:
                    raise RuntimeError("soffice did not answer on its pipe")
                time.sleep(0.2)
        self.desktop = self.ctx.ServiceManager.createInstanceWithContext("com.sun.star.frame.Desktop", self.ctx)

    def install(self, oxt):
        env = {"PATH": "/usr/bin:/bin", "HOME": self.work}
        cmd = ["unopkg", "add", "-s", "-env:UserInstallation=" + uno.systemPathToFileUrl(self.profile), oxt]
        if os.getuid() == 0:
            copy = os.path.join(self.work, os.path.basename(oxt))
            shutil.copyfile(oxt, copy)
            for root, dirs, files in os.walk(self.work):
                for n in dirs + files:
                    os.chown(os.path.join(root, n), NOBODY, NOBODY)
            os.chown(self.work, NOBODY, NOBODY)
            cmd = ["setpriv", "--reuid=%d" % NOBODY, "--regid=%d" % NOBODY, "--clear-groups"] + cmd[:-1] + [copy]
        p = subprocess.run(cmd, env=env, capture_output=True, text=True, timeout=300)
        if p.returncode != 0:
            raise RuntimeError("unopkg add failed: %s %s" % (p.stdout, p.stderr))

    def new_sheet_document(self):
        return self.desktop.loadComponentFromURL("private:factory/scalc", "_blank", 0, (_prop("Hidden", True),))

    def open(self, path):
        return self.desktop.loadComponentFromURL(uno.systemPathToFileUrl(path), "_blank", 0,
                                                 (_prop("Hidden", True),))

    def save_ods(self, doc, path):
        doc.storeToURL(uno.systemPathToFileUrl(path), (_prop("FilterName", "calc8"),))

    def close(self):
        try:
            self.desktop.terminate()
        except Exception:
            pass
        try:
            self.proc.wait(timeout=30)
        except subprocess.TimeoutExpired:
            os.killpg(self.proc.pid, signal.SIGKILL)
            self.proc.wait()
        shutil.rmtree(self.work, ignore_errors=True)

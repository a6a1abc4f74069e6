// Driving the dashboard page: sign-in, waiting for drawn elements, screenshots.
using System.Globalization;
using OpenQA.Selenium;

namespace FusionService.Browser.Tests.Infrastructure;

/// <summary>The dashboard in the fixture's browser.</summary>
internal sealed class DashboardPage(DashboardFixture fixture)
{
    public IWebDriver Driver => fixture.Driver;

    /// <summary>Opens the page signed out (clears the tab's session storage).</summary>
    public void OpenSignedOut()
    {
        Driver.Navigate().GoToUrl(fixture.BaseAddress);
        Script("sessionStorage.clear(); location.hash = ''; location.reload();");
        WaitFor(() => Visible("#sign-in-view"), TimeSpan.FromSeconds(20), "the sign-in form");
    }

    /// <summary>Types a key into the sign-in form and submits it.</summary>
    public void SubmitKey(string key)
    {
        var input = Driver.FindElement(By.Id("key-input"));
        input.Clear();
        input.SendKeys(key);
        Driver.FindElement(By.Id("sign-in-button")).Click();
    }

    /// <summary>Signs in with <paramref name="key"/> (default: the fixture's read key) and waits for the fleet view.</summary>
    public void SignIn(string? key = null)
    {
        OpenSignedOut();
        SubmitKey(key ?? fixture.ReadKey);
        WaitFor(() => Visible("#fleet-view"), TimeSpan.FromSeconds(20), "the fleet view after sign-in");
    }

    public bool Visible(string selector) =>
        Driver.FindElements(By.CssSelector(selector)).Any(e => e.Displayed);

    public object? Script(string script, params object[] args) => ((IJavaScriptExecutor)Driver).ExecuteScript(script, args);

    public object? AsyncScript(string script, params object[] args) => ((IJavaScriptExecutor)Driver).ExecuteAsyncScript(script, args);

    public string Attribute(IWebElement element, string name) => element.GetDomAttribute(name) ?? string.Empty;

    public static double Number(string text) => double.Parse(text, NumberStyles.Float, CultureInfo.InvariantCulture);

    /// <summary>Polls <paramref name="condition"/> every 250 ms; fails naming <paramref name="what"/> after <paramref name="timeout"/>.</summary>
    public static void WaitFor(Func<bool> condition, TimeSpan timeout, string what)
    {
        var deadline = DateTime.UtcNow + timeout;
        while (true)
        {
            try
            {
                if (condition())
                {
                    return;
                }
            }
            catch (StaleElementReferenceException)
            {
                // The page redrew the element between lookup and use: look again.
            }

            if (DateTime.UtcNow > deadline)
            {
                throw new Xunit.Sdk.XunitException($"timed out after {timeout.TotalSeconds:0} s waiting for {what}");
            }

            Thread.Sleep(250);
        }
    }

    /// <summary>
    /// For the README: the page from its top in a window <paramref name="heightPx"/> tall (so that the table or panels
    /// below the map show too), saved like <see cref="Screenshot"/>; the window gets its usual size back afterwards.
    /// </summary>
    public string DocsScreenshot(string name, int heightPx)
    {
        Driver.Manage().Window.Size = new System.Drawing.Size(1400, heightPx);
        Script("window.scrollTo(0, 0);");
        Thread.Sleep(TimeSpan.FromSeconds(2));
        try
        {
            return Screenshot(name);
        }
        finally
        {
            Driver.Manage().Window.Size = new System.Drawing.Size(1400, 900);
        }
    }

    /// <summary>Saves a PNG of the window under the test artifacts; returns its path.</summary>
    public string Screenshot(string name)
    {
        string path = Path.Combine(RepositoryFiles.Artifacts(), name + ".png");
        ((ITakesScreenshot)Driver).GetScreenshot().SaveAsFile(path);
        return path;
    }
}
